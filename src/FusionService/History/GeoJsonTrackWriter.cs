// RFC 7946 GeoJSON track.
using System.Text.Json;

namespace FusionService.History;

/// <summary>
/// An RFC 7946 FeatureCollection: one Point feature per track point (properties: time, heading, speed, ellipse and,
/// for raw fixes, the outcome), written as the points come, then one LineString feature through all points (positions
/// [longitude, latitude], section 3.1.1) with the header as its properties. The LineString comes last because it needs
/// every position; only the positions (16 bytes a point) are held for it. With fewer than two points there is no
/// LineString (section 3.1.4 needs two or more positions).
/// </summary>
internal sealed class GeoJsonTrackWriter(Stream buffer) : TrackFormatWriter
{
    private readonly Utf8JsonWriter _json = new(buffer);
    private readonly List<(double Lon, double Lat)> _line = [];
    private TrackHeader _header = null!;

    /// <inheritdoc />
    public override string ContentType => "application/geo+json; charset=utf-8";

    /// <inheritdoc />
    public override void Begin(TrackHeader header)
    {
        _header = header;
        _json.WriteStartObject();
        _json.WriteString("type", "FeatureCollection");
        _json.WriteStartArray("features");
    }

    /// <inheritdoc />
    public override void Point(in TrackPoint p)
    {
        double lon = GpxTrackWriter.NormaliseLongitude(p.LonDeg);
        _line.Add((lon, p.LatDeg));
        _json.WriteStartObject();
        _json.WriteString("type", "Feature");
        _json.WriteStartObject("geometry");
        _json.WriteString("type", "Point");
        _json.WriteStartArray("coordinates");
        _json.WriteNumberValue(lon);
        _json.WriteNumberValue(p.LatDeg);
        _json.WriteEndArray();
        _json.WriteEndObject();
        _json.WriteStartObject("properties");
        _json.WriteString("time", HistoryTime.Format(p.TimeUs));
        TrackPointJson.WriteEstimateFields(_json, p);
        _json.WriteEndObject();
        _json.WriteEndObject();
    }

    /// <inheritdoc />
    public override void End()
    {
        if (_line.Count >= 2)
        {
            _json.WriteStartObject();
            _json.WriteString("type", "Feature");
            _json.WriteStartObject("geometry");
            _json.WriteString("type", "LineString");
            _json.WriteStartArray("coordinates");
            foreach (var (lon, lat) in _line)
            {
                _json.WriteStartArray();
                _json.WriteNumberValue(lon);
                _json.WriteNumberValue(lat);
                _json.WriteEndArray();
            }

            _json.WriteEndArray();
            _json.WriteEndObject();
            _json.WriteStartObject("properties");
            _json.WriteString("vehicle", _header.Vehicle);
            _json.WriteString("kind", _header.Kind);
            _json.WriteString("from", HistoryTime.Format(_header.FromUs));
            _json.WriteString("to", HistoryTime.Format(_header.ToUs));
            _json.WriteString("caution", _header.Caution);
            _json.WriteEndObject();
            _json.WriteEndObject();
        }

        _json.WriteEndArray();
        _json.WriteEndObject();
    }

    /// <inheritdoc />
    public override void Flush() => _json.Flush();
}
