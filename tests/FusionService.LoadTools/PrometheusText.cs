// Reading values and histograms back from the Prometheus text format the service serves.
using System.Globalization;

namespace FusionService.LoadTools;

/// <summary>
/// Minimal reader of the Prometheus text exposition format 0.0.4 as the OpenTelemetry exporter writes it for the
/// service: a sample is <c>name{label="value",...} number [timestamp]</c>, and the exporter adds labels of its own
/// (<c>otel_scope_name</c>, ...), so samples are matched by name and by the labels asked for, whatever else they carry.
/// </summary>
public static class PrometheusText
{
    /// <summary>
    /// The sum of the samples named <paramref name="name"/> (<c>metric</c> or <c>metric{label="value",...}</c>) whose
    /// labels include every label given there, or NaN when none matches.
    /// </summary>
    public static double Value(string text, string name)
    {
        ArgumentNullException.ThrowIfNull(text);
        ArgumentNullException.ThrowIfNull(name);
        var (metric, wanted) = SplitSelector(name);
        double sum = 0;
        bool found = false;
        foreach (var line in text.Split('\n'))
        {
            if (Parse(line) is { } sample && sample.Metric == metric && Includes(sample.Labels, wanted))
            {
                sum += sample.Value;
                found = true;
            }
        }

        return found ? sum : double.NaN;
    }

    /// <summary>The observations a histogram (all its series added up) gained between two scrapes.</summary>
    public static HistogramDelta HistogramDifference(string before, string after, string name)
    {
        ArgumentNullException.ThrowIfNull(before);
        ArgumentNullException.ThrowIfNull(after);
        var earlier = Buckets(before, name);
        var bounds = new List<(double UpperS, double Count)>();
        foreach (var (upper, count) in Buckets(after, name))
        {
            bounds.Add((upper, count - earlier.GetValueOrDefault(upper)));
        }

        double n = Zero(Value(after, name + "_count")) - Zero(Value(before, name + "_count"));
        double sum = Zero(Value(after, name + "_sum")) - Zero(Value(before, name + "_sum"));
        return new HistogramDelta((long)n, n > 0 ? sum / n : double.NaN, bounds);
    }

    /// <summary>The cumulative bucket counts of histogram <paramref name="name"/> by upper bound, all series added up.</summary>
    private static SortedDictionary<double, double> Buckets(string text, string name)
    {
        var buckets = new SortedDictionary<double, double>();
        foreach (var line in text.Split('\n'))
        {
            if (Parse(line) is { } sample && sample.Metric == name + "_bucket"
                && sample.Labels.FirstOrDefault(l => l.Name == "le").Value is { } le)
            {
                double upper = le == "+Inf" ? double.PositiveInfinity : double.Parse(le, NumberStyles.Float, CultureInfo.InvariantCulture);
                buckets[upper] = buckets.GetValueOrDefault(upper) + sample.Value;
            }
        }

        return buckets;
    }

    /// <summary>A series not yet written (no observation so far) counts zero.</summary>
    private static double Zero(double value) => double.IsNaN(value) ? 0 : value;

    private static bool Includes(List<(string Name, string Value)> labels, List<(string Name, string Value)> wanted) =>
        wanted.All(w => labels.Contains(w));

    private static (string Metric, List<(string Name, string Value)> Labels) SplitSelector(string name)
    {
        int brace = name.IndexOf('{', StringComparison.Ordinal);
        return brace < 0 ? (name, []) : (name[..brace], ParseLabels(name.AsSpan(brace + 1, name.LastIndexOf('}') - brace - 1)));
    }

    private static (string Metric, List<(string Name, string Value)> Labels, double Value)? Parse(string line)
    {
        if (line.Length == 0 || line[0] == '#')
        {
            return null;
        }

        int brace = line.IndexOf('{', StringComparison.Ordinal);
        int space = line.IndexOf(' ', StringComparison.Ordinal);
        if (space < 0)
        {
            return null;
        }

        string metric;
        List<(string Name, string Value)> labels;
        int valueStart;
        if (brace >= 0 && brace < space)
        {
            int close = line.LastIndexOf('}');
            metric = line[..brace];
            labels = ParseLabels(line.AsSpan(brace + 1, close - brace - 1));
            valueStart = close + 2;
        }
        else
        {
            metric = line[..space];
            labels = [];
            valueStart = space + 1;
        }

        var rest = line.AsSpan(valueStart).Trim();
        int end = rest.IndexOf(' ');
        var number = end < 0 ? rest : rest[..end];
        return double.TryParse(number, NumberStyles.Float, CultureInfo.InvariantCulture, out double value)
            ? (metric, labels, value)
            : number is "+Inf" ? (metric, labels, double.PositiveInfinity) : null;
    }

    /// <summary>Labels <c>a="x",b="y"</c> (values with <c>\"</c>, <c>\\</c> and <c>\n</c> escapes).</summary>
    private static List<(string Name, string Value)> ParseLabels(ReadOnlySpan<char> text)
    {
        var labels = new List<(string, string)>();
        int i = 0;
        while (i < text.Length)
        {
            int eq = text[i..].IndexOf('=');
            if (eq < 0)
            {
                break;
            }

            string label = text.Slice(i, eq).Trim().TrimStart(',').Trim().ToString();
            i += eq + 2; // past ="
            var value = new System.Text.StringBuilder();
            while (i < text.Length && text[i] != '"')
            {
                if (text[i] == '\\' && i + 1 < text.Length)
                {
                    i++;
                    value.Append(text[i] == 'n' ? '\n' : text[i]);
                }
                else
                {
                    value.Append(text[i]);
                }

                i++;
            }

            labels.Add((label, value.ToString()));
            i++; // past the closing quote
        }

        return labels;
    }
}
