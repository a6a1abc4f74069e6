// What a base-layer point stands for.
namespace FusionService.BaseLayer;

/// <summary>The properties of a base-layer feature.</summary>
/// <param name="Layer"><c>road</c>: a cell the fleet drove through; <c>stop</c>: a place where its vans stood.</param>
/// <param name="Vehicles">Different vans counted there.</param>
/// <param name="States">Road cells: stored moving estimates in the cell (left out for stops).</param>
/// <param name="DwellS">Stops: seconds vans stood there, summed over vans, counted in whole minutes (left out for road cells).</param>
public sealed record BaseLayerProperties(string Layer, long Vehicles, long? States = null, double? DwellS = null);
