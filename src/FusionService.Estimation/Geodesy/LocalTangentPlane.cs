namespace FusionService.Estimation.Geodesy;

/// <summary>A local East-North-Up frame on the WGS-84 ellipsoid, tangent at an anchor point.</summary>
/// <remarks>
/// The frame's origin is the anchor's ECEF position (including its height); its axes are east, north and the
/// ellipsoid normal at the anchor. <see cref="ToEnu"/> and <see cref="ToGeodetic"/> are the exact rotation
/// between ECEF differences and ENU (the geocentric/topocentric conversion of EPSG Guidance Note 7-2), not a
/// flat-earth approximation: they are inverse to each other to a few nanometres at any distance. The plane becomes an
/// approximation only when a consumer drops Up and treats (East, North) as Euclidean; see
/// <see cref="MaxRadiusForScaleErrorM"/> for where to re-anchor.
/// The anchor's sines, cosines and ECEF position are computed once in the constructor; no method allocates.
/// At a pole the axes are the limits of those of a point approaching the pole along the anchor's meridian: at the
/// north pole North points down the meridian of longitude + pi, at the south pole up the anchor's own meridian,
/// and East is 90 deg clockwise from North (seen from above); round trips still hold.
/// Across the antimeridian East is continuous, since the rotation works on ECEF differences.
/// <c>default(LocalTangentPlane)</c> is not a valid frame; use the constructor.
/// </remarks>
public readonly struct LocalTangentPlane
{
    private readonly double sinLat;
    private readonly double cosLat;
    private readonly double sinLon;
    private readonly double cosLon;
    private readonly EcefPoint origin;

    /// <summary>Creates the frame tangent to the WGS-84 ellipsoid at <paramref name="anchor"/>.</summary>
    /// <param name="anchor">Frame origin (radians, metres); latitude in [-pi/2, pi/2], all finite.</param>
    /// <exception cref="ArgumentOutOfRangeException">A coordinate is not finite or the latitude is outside
    /// [-pi/2, pi/2].</exception>
    public LocalTangentPlane(GeodeticPoint anchor)
    {
        if (!double.IsFinite(anchor.LatitudeRad) || Math.Abs(anchor.LatitudeRad) > Math.PI / 2
            || !double.IsFinite(anchor.LongitudeRad) || !double.IsFinite(anchor.HeightM))
        {
            throw new ArgumentOutOfRangeException(nameof(anchor), anchor, "must be finite with |latitude| <= pi/2");
        }

        Anchor = anchor;
        (sinLat, cosLat) = Math.SinCos(anchor.LatitudeRad);
        (sinLon, cosLon) = Math.SinCos(anchor.LongitudeRad);
        origin = GeodeticToEcef.Convert(anchor);
    }

    /// <summary>The frame origin given to the constructor.</summary>
    public GeodeticPoint Anchor { get; }

    /// <summary>Largest geodesic distance from the anchor, metres, within which the Euclidean (East, North)
    /// distance between any two points on the ellipsoid (Up dropped) differs from their ellipsoidal (geodesic)
    /// distance by less than <paramref name="relativeError"/> times that distance.</summary>
    /// <param name="relativeError">Allowed relative distance error, in (0, 1); e.g. 1e-5 = 1 cm per km.</param>
    /// <returns>R_min acos(1 - relativeError) with R_min = a (1 - e^2) = 6335439.3 m; 28333.0 m for 1e-5.</returns>
    /// <remarks>
    /// Derivation. Dropping Up projects orthogonally onto the tangent plane. A line element t on the surface at a
    /// point whose normal makes angle psi with the anchor normal n0 keeps the length factor sqrt(1 - (t.n0)^2),
    /// which lies between cos psi (t in the plane of the two normals: the radial direction) and 1 (t
    /// perpendicular to it). So the plane shortens lengths by a relative error of at most 1 - cos psi, and that
    /// bound is reached by short radial segments. Along a curve of length d from the anchor the normal turns by at
    /// most d / R_min, where R_min = a (1 - e^2) is the smallest radius of curvature of the ellipsoid (the meridian
    /// radius at the equator). Hence for all segments within distance d: relative error &lt;= 1 - cos(d / R_min)
    /// ~ d^2 / (2 R_min^2), i.e. k = 2 in d^2 / (k R^2). Distances measured from the anchor itself do better: on a
    /// sphere the plane gives R sin(d / R), relative error 1 - sin(x) / x ~ d^2 / (6 R^2), k = 6; this method uses
    /// the worst case k = 2 because the filter differences consecutive fixes anywhere in the disc. Points at height
    /// h project at the scale of the surface at that height, (R + h) / R of the ellipsoidal distance: that is the
    /// distance travelled at height h, not an error of the plane, and it is not included here.
    /// </remarks>
    /// <exception cref="ArgumentOutOfRangeException"><paramref name="relativeError"/> not in (0, 1).</exception>
    public static double MaxRadiusForScaleErrorM(double relativeError)
    {
        if (!(relativeError > 0 && relativeError < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(relativeError), relativeError, "must be in (0, 1)");
        }

        double minRadiusOfCurvatureM = Wgs84.SemiMajorAxisM * (1.0 - Wgs84.FirstEccentricitySquared);
        return minRadiusOfCurvatureM * Math.Acos(1.0 - relativeError);
    }

    /// <summary>Converts a WGS-84 geodetic point to this frame.</summary>
    /// <param name="p">Geodetic point (radians, metres).</param>
    /// <returns>East, North, Up of <paramref name="p"/> relative to the anchor, metres.</returns>
    public EnuPoint ToEnu(GeodeticPoint p)
    {
        EcefPoint ecef = GeodeticToEcef.Convert(p);
        double dx = ecef.XM - origin.XM;
        double dy = ecef.YM - origin.YM;
        double dz = ecef.ZM - origin.ZM;
        double horizontal = (cosLon * dx) + (sinLon * dy);
        return new EnuPoint(
            (-sinLon * dx) + (cosLon * dy),
            (-sinLat * horizontal) + (cosLat * dz),
            (cosLat * horizontal) + (sinLat * dz));
    }

    /// <summary>Converts a point of this frame back to WGS-84 geodetic coordinates.</summary>
    /// <param name="p">East, North, Up relative to the anchor, metres.</param>
    /// <returns>Geodetic point (radians, metres), longitude in [-pi, pi].</returns>
    public GeodeticPoint ToGeodetic(EnuPoint p)
    {
        double horizontal = (-sinLat * p.NorthM) + (cosLat * p.UpM);
        double dx = (-sinLon * p.EastM) + (cosLon * horizontal);
        double dy = (cosLon * p.EastM) + (sinLon * horizontal);
        double dz = (cosLat * p.NorthM) + (sinLat * p.UpM);
        return EcefToGeodetic.Convert(new EcefPoint(origin.XM + dx, origin.YM + dy, origin.ZM + dz));
    }
}
