// Output formats of the track history.
namespace FusionService.History;

/// <summary>Output format of a track.</summary>
public enum TrackFormat
{
    /// <summary>The service's JSON document (application/json).</summary>
    Json,

    /// <summary>RFC 7946 GeoJSON FeatureCollection (application/geo+json).</summary>
    GeoJson,

    /// <summary>GPX 1.1 (application/gpx+xml).</summary>
    Gpx,

    /// <summary>RFC 4180 comma-separated values with a header row (text/csv).</summary>
    Csv,
}
