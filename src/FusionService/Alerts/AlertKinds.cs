// The alert kinds, their severities and the sensor names used in alert details.
using FusionService.Estimation.Measurements;

namespace FusionService.Alerts;

/// <summary>Names of the alert kinds (as stored and as the API spells them) and the fixed severity of each.</summary>
public static class AlertKinds
{
    /// <summary>Several measurements rejected by the gate within a short window, grouped into one alert.</summary>
    public const string GatedBurst = "gated_burst";

    /// <summary>A sensor's windowed mean NIS lies outside its two-sided chi-square band.</summary>
    public const string InconsistentSensor = "inconsistent_sensor";

    /// <summary>No GNSS position for longer than the threshold while the estimated speed is above its threshold.</summary>
    public const string GnssSilentWhileMoving = "gnss_silent_while_moving";

    /// <summary>The track re-initialised its position (a jump or relocation, e.g. towing).</summary>
    public const string TrackReset = "track_reset";

    /// <summary>The estimated wheel-speed scale lies outside the accepted band, with a small enough uncertainty.</summary>
    public const string WheelScaleOutOfBand = "wheel_scale_out_of_band";

    /// <summary>The vehicle moves without driving: GNSS shows steady motion while its wheels are still (towed, ferried, lifted).</summary>
    public const string MovedWithoutDriving = "moved_without_driving";

    /// <summary>A stream is no longer fused because it keeps disagreeing with independent ones (a gyro, a GNSS course).</summary>
    public const string SensorIsolated = "sensor_isolated";

    /// <summary>Nothing received from the vehicle for longer than the threshold.</summary>
    public const string VehicleSilent = "vehicle_silent";

    /// <summary>
    /// A stored measurement the filter failed on numerically (for example an accuracy so large that the innovation
    /// covariance is not positive definite): it was judged unusable and skipped, and the track went on without it.
    /// Always on; resolves after <see cref="MeasurementUnusableClearS"/> seconds of data without another.
    /// </summary>
    public const string MeasurementUnusable = "measurement_unusable";

    /// <summary>Seconds of data without another unusable measurement after which <see cref="MeasurementUnusable"/> resolves (a design choice).</summary>
    public const double MeasurementUnusableClearS = 600;

    /// <summary>Every kind, in the order above.</summary>
    public static IReadOnlyList<string> All { get; } = [GatedBurst, InconsistentSensor, GnssSilentWhileMoving, TrackReset, WheelScaleOutOfBand, MovedWithoutDriving, SensorIsolated, VehicleSilent, MeasurementUnusable];

    /// <summary>
    /// Severity of a kind: <c>critical</c> for a track reset (the position jumped), <c>info</c> for the wheel scale (a
    /// maintenance hint: the filter calibrates it online), <c>warning</c> otherwise.
    /// </summary>
    public static string SeverityOf(string kind) => kind switch
    {
        TrackReset => "critical",
        WheelScaleOutOfBand => "info",
        _ => "warning",
    };

    /// <summary>The API's name of a sensor: <c>gnss_position</c>, <c>gnss_velocity</c>, <c>wheel</c>, <c>imu</c>.</summary>
    public static string SensorName(SensorKind sensor) => SensorNames.Of(sensor);
}
