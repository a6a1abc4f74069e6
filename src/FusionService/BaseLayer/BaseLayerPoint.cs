// A GeoJSON Point.
namespace FusionService.BaseLayer;

/// <summary>A GeoJSON Point geometry.</summary>
/// <param name="Type">Always <c>Point</c>.</param>
/// <param name="Coordinates">WGS-84 longitude then latitude, degrees (RFC 7946 order).</param>
public sealed record BaseLayerPoint(string Type, IReadOnlyList<double> Coordinates);
