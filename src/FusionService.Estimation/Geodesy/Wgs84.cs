namespace FusionService.Estimation.Geodesy;

/// <summary>WGS-84 defining parameters (NIMA TR8350.2, 3rd edition, 2000, table 3.1).</summary>
public static class Wgs84
{
    /// <summary>Semi-major axis a, metres (published).</summary>
    public const double SemiMajorAxisM = 6378137.0;

    /// <summary>Inverse flattening 1/f (published).</summary>
    public const double InverseFlattening = 298.257223563;

    /// <summary>Flattening f = 1 / (1/f).</summary>
    public const double Flattening = 1.0 / InverseFlattening;

    /// <summary>Semi-minor axis b = a (1 - f), metres (derived: 6356752.3142 m).</summary>
    public const double SemiMinorAxisM = SemiMajorAxisM * (1.0 - Flattening);

    /// <summary>First eccentricity squared e^2 = f (2 - f) (derived: 0.00669437999014).</summary>
    public const double FirstEccentricitySquared = Flattening * (2.0 - Flattening);
}
