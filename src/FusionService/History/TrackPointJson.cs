// The per-point fields shared by the JSON and GeoJSON track documents.
using System.Text.Json;

namespace FusionService.History;

/// <summary>Writes the fields of a <see cref="TrackPoint"/> after its time and position, leaving out those it lacks.</summary>
internal static class TrackPointJson
{
    /// <summary>heading_deg, speed_mps, ellipse95, outcome, nis, accuracy_m, track_reset, into the open object.</summary>
    public static void WriteEstimateFields(Utf8JsonWriter json, in TrackPoint p)
    {
        if (p.HeadingDeg is { } heading)
        {
            json.WriteNumber("heading_deg", heading);
        }

        if (p.SpeedMps is { } speed)
        {
            json.WriteNumber("speed_mps", speed);
        }

        json.WriteStartObject("ellipse95");
        json.WriteNumber("semi_major_m", p.SemiMajorM);
        json.WriteNumber("semi_minor_m", p.SemiMinorM);
        json.WriteNumber("orientation_deg", p.OrientationDeg);
        json.WriteEndObject();
        if (p.Outcome is { } outcome)
        {
            json.WriteString("outcome", outcome);
        }

        if (p.Nis is { } nis)
        {
            json.WriteNumber("nis", nis);
        }

        if (p.AccuracyM is { } accuracy)
        {
            json.WriteNumber("accuracy_m", accuracy);
        }

        if (p.TrackReset is { } reset)
        {
            json.WriteBoolean("track_reset", reset);
        }
    }
}
