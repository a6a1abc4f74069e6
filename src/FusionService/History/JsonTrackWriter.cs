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
        TrackPointJson.WriteEstimateFields(_json, p);
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
