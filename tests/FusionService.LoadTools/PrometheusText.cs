// Reading values and histograms back from the Prometheus text format the service writes.
using System.Globalization;

namespace FusionService.LoadTools;

/// <summary>Minimal reader of the Prometheus text exposition format 0.0.4 for the service's own metrics.</summary>
public static class PrometheusText
{
    /// <summary>The value of the sample named exactly <paramref name="name"/> (with labels if any), or NaN.</summary>
    public static double Value(string text, string name)
    {
        ArgumentNullException.ThrowIfNull(text);
        foreach (var line in text.Split('\n'))
        {
            if (line.StartsWith(name + " ", StringComparison.Ordinal))
            {
                return double.Parse(line.AsSpan(name.Length + 1), NumberStyles.Float, CultureInfo.InvariantCulture);
            }
        }

        return double.NaN;
    }

    /// <summary>The observations a histogram gained between two scrapes.</summary>
    public static HistogramDelta HistogramDifference(string before, string after, string name)
    {
        ArgumentNullException.ThrowIfNull(before);
        ArgumentNullException.ThrowIfNull(after);
        var bounds = new List<(double UpperS, double Count)>();
        foreach (var line in after.Split('\n'))
        {
            string prefix = name + "_bucket{le=\"";
            if (!line.StartsWith(prefix, StringComparison.Ordinal))
            {
                continue;
            }

            int end = line.IndexOf('"', prefix.Length);
            string le = line[prefix.Length..end];
            string sample = line[..line.IndexOf(' ', StringComparison.Ordinal)];
            double upper = le == "+Inf" ? double.PositiveInfinity : double.Parse(le, NumberStyles.Float, CultureInfo.InvariantCulture);
            double count = Value(after, sample) - Value(before, sample);
            bounds.Add((upper, count));
        }

        double n = Value(after, name + "_count") - Value(before, name + "_count");
        double sum = Value(after, name + "_sum") - Value(before, name + "_sum");
        return new HistogramDelta((long)n, n > 0 ? sum / n : double.NaN, bounds);
    }
}
