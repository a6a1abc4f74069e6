namespace FusionService.Estimation.Geodesy;

/// <summary>Solution of the inverse geodesic problem between two points on an ellipsoid.</summary>
/// <remarks>
/// Azimuths are measured clockwise from north, in radians, in (-pi, pi] (so 306 deg is returned as -54 deg).
/// Both are forward azimuths, i.e. directions of travel along the geodesic from point 1 towards point 2:
/// <see cref="FinalAzimuthRad"/> is the heading on arrival at point 2. The "reverse azimuth" of Geoscience
/// Australia's and Vincenty's tables (the direction from point 2 back to point 1) is FinalAzimuthRad + pi.
/// </remarks>
/// <param name="DistanceM">Geodesic (shortest) distance, metres, &gt;= 0.</param>
/// <param name="InitialAzimuthRad">Azimuth of the geodesic at point 1, radians, clockwise from north, (-pi, pi].</param>
/// <param name="FinalAzimuthRad">Azimuth of the geodesic at point 2 (continuing past it), radians, (-pi, pi].</param>
public readonly record struct GeodesicInverseResult(double DistanceM, double InitialAzimuthRad, double FinalAzimuthRad);
