// The service's own JSON track document.
using System.Text.Json;

namespace FusionService.History;

/// <summary>
/// <c>{"vehicle","kind","from","to","caution","points":[{"time","lat_deg","lon_deg","heading_deg","speed_mps",
/// "ellipse95":{...},"outcome","nis","accuracy_m","track_reset"}]}</c>; fields a point lacks are left out.
/// </summary>
internal sealed class JsonTrackWriter(Stream buffer) : TrackFormatWriter
{
    private readonly Utf8JsonWriter _json = new(buffer);

    /// <inheritdoc />
    public override string ContentType => "application/json; charset=utf-8";

    /// <inheritdoc />
    public override void Begin(TrackHeader header)
    {
        _json.WriteStartObject();
        _json.WriteString("vehicle", header.Vehicle);
        _json.WriteString("kind", header.Kind);
        _json.WriteString("from", HistoryTime.Format(header.FromUs));
        _json.WriteString("to", HistoryTime.Format(header.ToUs));
        _json.WriteString("caution", header.Caution);
        _json.WriteStartArray("points");
    }

    /// <inheritdoc />
    public override void Point(in TrackPoint p)
    {
        _json.WriteStartObject();
        _json.WriteString("time", HistoryTime.Format(p.TimeUs));
        _json.WriteNumber("lat_deg", p.LatDeg);
        _json.WriteNumber("lon_deg", p.LonDeg);
        if (p.HeadingDeg is { } heading)
        {
            _json.WriteNumber("heading_deg", heading);
        }

        if (p.SpeedMps is { } speed)
        {
            _json.WriteNumber("speed_mps", speed);
        }

        _json.WriteStartObject("ellipse95");
        _json.WriteNumber("semi_major_m", p.SemiMajorM);
        _json.WriteNumber("semi_minor_m", p.SemiMinorM);
        _json.WriteNumber("orientation_deg", p.OrientationDeg);
        _json.WriteEndObject();
        if (p.Outcome is { } outcome)
        {
            _json.WriteString("outcome", outcome);
        }

        if (p.Nis is { } nis)
        {
            _json.WriteNumber("nis", nis);
        }

        if (p.AccuracyM is { } accuracy)
        {
            _json.WriteNumber("accuracy_m", accuracy);
        }

        if (p.TrackReset is { } reset)
        {
            _json.WriteBoolean("track_reset", reset);
        }

        _json.WriteEndObject();
    }

    /// <inheritdoc />
    public override void End()
    {
        _json.WriteEndArray();
        _json.WriteEndObject();
    }

    /// <inheritdoc />
    public override void Flush() => _json.Flush();
}
