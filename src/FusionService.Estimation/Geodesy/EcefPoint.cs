namespace FusionService.Estimation.Geodesy;

/// <summary>Earth-centred, earth-fixed Cartesian coordinates: origin at the ellipsoid centre, Z along the
/// rotation axis (north), X through longitude 0 on the equator, Y through longitude 90 deg east.</summary>
/// <param name="XM">X, metres.</param>
/// <param name="YM">Y, metres.</param>
/// <param name="ZM">Z, metres.</param>
public readonly record struct EcefPoint(double XM, double YM, double ZM);
