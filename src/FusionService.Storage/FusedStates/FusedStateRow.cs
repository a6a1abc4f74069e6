// One stored filter estimate.
namespace FusionService.Storage.FusedStates;

/// <summary>One row of <c>fused_states</c>: the filter's estimate for one vehicle at one instant.</summary>
/// <param name="FleetId">Owning fleet.</param>
/// <param name="VehicleId">Vehicle identifier within the fleet.</param>
/// <param name="TimeUs">Instant of the estimate, Unix microseconds (UTC). Also decides the daily partition.</param>
/// <param name="LatDeg">WGS-84 latitude, degrees, in [-90, 90].</param>
/// <param name="LonDeg">WGS-84 longitude, degrees, in [-180, 180].</param>
/// <param name="HeadingRad">Heading, radians (convention of the estimation core).</param>
/// <param name="SpeedMps">Speed over ground, metres per second.</param>
/// <param name="YawRateRps">Yaw rate, radians per second.</param>
/// <param name="AccelMps2">Longitudinal acceleration, metres per second squared.</param>
/// <param name="GyroBiasRps">Estimated gyro bias, radians per second.</param>
/// <param name="WheelScale">Estimated wheel-speed scale factor, dimensionless (1 = nominal).</param>
/// <param name="Covariance">Upper triangle of the 8x8 state covariance, row-major, exactly 36 values, in the
/// units and order of the estimation core's state vector. Stored as <c>double precision[]</c>.</param>
/// <param name="EllipseMajorM">Semi-major axis of the horizontal error ellipse, metres, &gt;= minor axis.</param>
/// <param name="EllipseMinorM">Semi-minor axis of the horizontal error ellipse, metres, &gt;= 0.</param>
/// <param name="EllipseOrientationRad">Orientation of the major axis, radians (convention of the estimation core).</param>
/// <remarks>Record equality compares <see cref="Covariance"/> by reference, as <see cref="ReadOnlyMemory{T}"/>
/// does; compare its elements to compare contents.</remarks>
public readonly record struct FusedStateRow(
    Guid FleetId,
    string VehicleId,
    long TimeUs,
    double LatDeg,
    double LonDeg,
    double HeadingRad,
    double SpeedMps,
    double YawRateRps,
    double AccelMps2,
    double GyroBiasRps,
    double WheelScale,
    ReadOnlyMemory<double> Covariance,
    double EllipseMajorM,
    double EllipseMinorM,
    double EllipseOrientationRad)
{
    /// <summary>Number of values in <see cref="Covariance"/>: n (n + 1) / 2 for the n = 8 state variables.</summary>
    public const int PackedCovarianceLength = 36;
}
