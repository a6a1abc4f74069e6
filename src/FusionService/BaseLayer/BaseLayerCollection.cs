// The body of GET /v1/base-layer: a GeoJSON FeatureCollection with a few members of its own.
namespace FusionService.BaseLayer;

/// <summary>
/// The fleet's own base layer as a GeoJSON FeatureCollection (RFC 7946): point features for the grid cells the fleet
/// drove through (<c>layer</c> "road") and for the places where its vans stood (<c>layer</c> "stop"). The members
/// <c>days</c>, <c>cell_m</c>, <c>since</c> and <c>caution</c> are additions of this service (RFC 7946 section 6.1).
/// </summary>
/// <param name="Type">Always <c>FeatureCollection</c>.</param>
/// <param name="Days">How many days back the estimates were read.</param>
/// <param name="CellM">Side of a road cell, metres.</param>
/// <param name="StopCellM">Side of the cells stops are gathered in, metres.</param>
/// <param name="Since">Oldest estimate time counted.</param>
/// <param name="Caution">What the layer is and is not.</param>
/// <param name="Features">Road cells (west to east within south to north rows), then stops (longest first).</param>
public sealed record BaseLayerCollection(
    string Type, int Days, double CellM, double StopCellM, DateTimeOffset Since, string Caution, IReadOnlyList<BaseLayerFeature> Features);
