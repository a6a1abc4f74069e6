// RFC 4180 CSV track.
using System.Text;

namespace FusionService.History;

/// <summary>
/// RFC 4180 CSV: a header row, CRLF line ends, fields with a comma, quote, CR or LF quoted with doubled quotes; numbers
/// in the invariant culture; empty fields where a point has no value.
/// </summary>
internal sealed class CsvTrackWriter(Stream buffer) : TrackFormatWriter
{
    /// <summary>Column names of the header row.</summary>
    public static readonly string[] Columns =
    [
        "time", "lat_deg", "lon_deg", "heading_deg", "speed_mps", "ellipse95_semi_major_m", "ellipse95_semi_minor_m",
        "ellipse95_orientation_deg", "outcome", "nis", "accuracy_m", "track_reset",
    ];

    private readonly StreamWriter _text = new(buffer, new UTF8Encoding(false), 4096, leaveOpen: true) { NewLine = "\r\n" };
    private readonly string[] _fields = new string[Columns.Length];

    /// <inheritdoc />
    public override string ContentType => "text/csv; charset=utf-8; header=present";

    /// <summary>A field quoted as RFC 4180 section 2 rules 5-7 require.</summary>
    public static string Quote(string field)
    {
        ArgumentNullException.ThrowIfNull(field);
        return field.AsSpan().IndexOfAny(",\"\r\n") < 0 ? field : "\"" + field.Replace("\"", "\"\"", StringComparison.Ordinal) + "\"";
    }

    /// <inheritdoc />
    public override void Begin(TrackHeader header) => Row(Columns);

    /// <inheritdoc />
    public override void Point(in TrackPoint p)
    {
        _fields[0] = HistoryTime.Format(p.TimeUs);
        _fields[1] = Number(p.LatDeg);
        _fields[2] = Number(p.LonDeg);
        _fields[3] = p.HeadingDeg is { } h ? Number(h) : string.Empty;
        _fields[4] = p.SpeedMps is { } v ? Number(v) : string.Empty;
        _fields[5] = Number(p.SemiMajorM);
        _fields[6] = Number(p.SemiMinorM);
        _fields[7] = Number(p.OrientationDeg);
        _fields[8] = p.Outcome ?? string.Empty;
        _fields[9] = p.Nis is { } nis ? Number(nis) : string.Empty;
        _fields[10] = p.AccuracyM is { } a ? Number(a) : string.Empty;
        _fields[11] = p.TrackReset is { } r ? (r ? "true" : "false") : string.Empty;
        Row(_fields);
    }

    /// <inheritdoc />
    public override void End()
    {
    }

    /// <inheritdoc />
    public override void Flush() => _text.Flush();

    private void Row(string[] fields)
    {
        for (int i = 0; i < fields.Length; i++)
        {
            if (i > 0)
            {
                _text.Write(',');
            }

            _text.Write(Quote(fields[i]));
        }

        _text.WriteLine();
    }
}
