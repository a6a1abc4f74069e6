// One feature of the base layer.
namespace FusionService.BaseLayer;

/// <summary>A GeoJSON Feature of the base layer: a point and what it stands for.</summary>
/// <param name="Type">Always <c>Feature</c>.</param>
/// <param name="Geometry">The point: a road cell's centre or a stop's mean position.</param>
/// <param name="Properties">Which layer and how much use.</param>
public sealed record BaseLayerFeature(string Type, BaseLayerPoint Geometry, BaseLayerProperties Properties);
