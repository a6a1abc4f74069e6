namespace FusionService.Estimation.Geodesy;

/// <summary>A point given by geodetic latitude, longitude and ellipsoidal height.</summary>
/// <param name="LatitudeRad">Geodetic latitude, radians, in [-pi/2, pi/2], positive north.</param>
/// <param name="LongitudeRad">Longitude, radians, positive east; any value (routines wrap it as needed).</param>
/// <param name="HeightM">Height above the ellipsoid, metres (not above the geoid); default 0.</param>
public readonly record struct GeodeticPoint(double LatitudeRad, double LongitudeRad, double HeightM = 0)
{
    /// <summary>Geodetic latitude, degrees.</summary>
    public double LatitudeDeg => Angles.RadiansToDegrees(LatitudeRad);

    /// <summary>Longitude, degrees.</summary>
    public double LongitudeDeg => Angles.RadiansToDegrees(LongitudeRad);

    /// <summary>Creates a point from degrees.</summary>
    /// <param name="latDeg">Geodetic latitude, degrees, positive north.</param>
    /// <param name="lonDeg">Longitude, degrees, positive east.</param>
    /// <param name="heightM">Height above the ellipsoid, metres.</param>
    /// <returns>The point with angles in radians.</returns>
    public static GeodeticPoint FromDegrees(double latDeg, double lonDeg, double heightM = 0) =>
        new(Angles.DegreesToRadians(latDeg), Angles.DegreesToRadians(lonDeg), heightM);
}
