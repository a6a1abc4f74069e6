namespace FusionService.Estimation.Geodesy;

/// <summary>An oblate ellipsoid of revolution given by its semi-major axis and flattening.</summary>
/// <param name="SemiMajorAxisM">Equatorial radius a, metres; positive.</param>
/// <param name="Flattening">Flattening f = (a - b) / a, dimensionless; 0 (sphere) &lt;= f &lt; 1. The conversions
/// and geodesic routines of this namespace assume an oblate or spherical ellipsoid.</param>
public readonly record struct Ellipsoid(double SemiMajorAxisM, double Flattening)
{
    /// <summary>WGS-84 (NIMA TR8350.2, 3rd ed., 2000, table 3.1): a = 6378137 m, 1/f = 298.257223563.</summary>
    public static Ellipsoid Wgs84 { get; } = new(Geodesy.Wgs84.SemiMajorAxisM, Geodesy.Wgs84.Flattening);

    /// <summary>GRS 80 (Moritz, Bulletin Geodesique 54(3), 1980): a = 6378137 m, 1/f = 298.257222101.</summary>
    public static Ellipsoid Grs80 { get; } = FromInverseFlattening(6378137.0, 298.257222101);

    /// <summary>Bessel 1841: a = 6377397.155 m, 1/f = 299.1528128 (the values used in Vincenty 1975).</summary>
    public static Ellipsoid Bessel1841 { get; } = FromInverseFlattening(6377397.155, 299.1528128);

    /// <summary>Semi-minor (polar) axis b = a (1 - f), metres.</summary>
    public double SemiMinorAxisM => SemiMajorAxisM * (1.0 - Flattening);

    /// <summary>First eccentricity squared e^2 = f (2 - f), dimensionless.</summary>
    public double FirstEccentricitySquared => Flattening * (2.0 - Flattening);

    /// <summary>Creates an ellipsoid from a and the inverse flattening 1/f.</summary>
    /// <param name="a">Equatorial radius a, metres; positive and finite.</param>
    /// <param name="invF">Inverse flattening 1/f, greater than 1; <see cref="double.PositiveInfinity"/> gives a sphere.</param>
    /// <exception cref="ArgumentOutOfRangeException">a is not positive and finite, or 1/f is not above 1.</exception>
    public static Ellipsoid FromInverseFlattening(double a, double invF)
    {
        if (!(a > 0) || double.IsInfinity(a))
        {
            throw new ArgumentOutOfRangeException(nameof(a), a, "must be positive and finite");
        }

        if (!(invF > 1))
        {
            throw new ArgumentOutOfRangeException(nameof(invF), invF, "must be above 1");
        }

        return new Ellipsoid(a, 1.0 / invF);
    }
}
