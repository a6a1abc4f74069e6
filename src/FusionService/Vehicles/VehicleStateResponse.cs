// The current fused state of one vehicle.
namespace FusionService.Vehicles;

/// <summary>
/// The current estimate of a vehicle with one-sigma standard deviations (the square roots of the filter's
/// covariance diagonal). Estimates, not for safety-critical navigation or collision avoidance.
/// </summary>
/// <param name="Vehicle">Vehicle id.</param>
/// <param name="Time">Time of the estimate (newest processed measurement).</param>
/// <param name="Phase">Track phase; always <c>running</c> (a track without position and heading has no state to show).</param>
/// <param name="LatDeg">WGS-84 latitude, degrees.</param>
/// <param name="LonDeg">WGS-84 longitude, degrees.</param>
/// <param name="PositionSdEastM">Standard deviation of the east position, metres.</param>
/// <param name="PositionSdNorthM">Standard deviation of the north position, metres.</param>
/// <param name="HeadingDeg">Heading as a course, degrees clockwise from north, in [0, 360).</param>
/// <param name="HeadingSdDeg">Its standard deviation, degrees.</param>
/// <param name="SpeedMps">Speed, m/s.</param>
/// <param name="SpeedSdMps">Its standard deviation, m/s.</param>
/// <param name="YawRateDps">Yaw rate, degrees per second, positive counter-clockwise (left turn).</param>
/// <param name="YawRateSdDps">Its standard deviation, deg/s.</param>
/// <param name="WheelScale">Wheel-speed scale factor (wheel reads speed x scale), dimensionless.</param>
/// <param name="WheelScaleSd">Its standard deviation.</param>
/// <param name="GyroBiasDps">Gyro yaw-rate bias, deg/s.</param>
/// <param name="GyroBiasSdDps">Its standard deviation, deg/s.</param>
/// <param name="Ellipse95">95 % horizontal error ellipse.</param>
/// <param name="LastMeasurement">Time of the newest measurement per sensor.</param>
/// <param name="Resets">Number of track resets (re-initialisations after sustained GNSS rejection).</param>
/// <param name="GnssErrorModel">The model of the GNSS fixes' error the track filters with now.</param>
/// <param name="Caution">The cautions that go with every location.</param>
public sealed record VehicleStateResponse(
    string Vehicle,
    DateTimeOffset Time,
    string Phase,
    double LatDeg,
    double LonDeg,
    double PositionSdEastM,
    double PositionSdNorthM,
    double HeadingDeg,
    double HeadingSdDeg,
    double SpeedMps,
    double SpeedSdMps,
    double YawRateDps,
    double YawRateSdDps,
    double WheelScale,
    double WheelScaleSd,
    double GyroBiasDps,
    double GyroBiasSdDps,
    ErrorEllipseResponse Ellipse95,
    SensorTimesResponse LastMeasurement,
    int Resets,
    GnssErrorModelResponse GnssErrorModel,
    string Caution);
