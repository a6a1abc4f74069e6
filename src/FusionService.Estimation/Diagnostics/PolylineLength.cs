using FusionService.Estimation.Geodesy;

namespace FusionService.Estimation.Diagnostics;

/// <summary>
/// Length of a polyline of positions on the WGS-84 ellipsoid, summed leg by leg with the geodesic inverse
/// (<see cref="VincentyInverse"/>, Vincenty 1975, with its fallback for nearly antipodal legs), fed one point at a time.
/// Applied to raw GNSS fixes it shows what naive odometry gives: every fix error adds length.
/// </summary>
public sealed class PolylineLength
{
    private GeodeticPoint _last;

    /// <summary>Total length so far, metres.</summary>
    public double LengthM { get; private set; }

    /// <summary>Number of points added.</summary>
    public int Points { get; private set; }

    /// <summary>Adds the next vertex.</summary>
    /// <param name="latitudeDeg">Latitude, degrees, in [-90, 90].</param>
    /// <param name="longitudeDeg">Longitude, degrees.</param>
    /// <exception cref="ArgumentOutOfRangeException">A coordinate is not finite or the latitude is out of range.</exception>
    public void Add(double latitudeDeg, double longitudeDeg)
    {
        if (!double.IsFinite(latitudeDeg) || !double.IsFinite(longitudeDeg) || Math.Abs(latitudeDeg) > 90)
        {
            throw new ArgumentOutOfRangeException(nameof(latitudeDeg), "coordinates must be finite with |latitude| <= 90 deg");
        }

        var point = GeodeticPoint.FromDegrees(latitudeDeg, longitudeDeg);
        if (Points > 0)
        {
            LengthM += VincentyInverse.Compute(_last, point).DistanceM;
        }

        _last = point;
        Points++;
    }
}
