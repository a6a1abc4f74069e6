// One fleet's alert thresholds.
namespace FusionService.Alerts;

/// <summary>
/// A fleet's alert rule settings (<c>GET/PUT /v1/alert-rules</c>, stored in <c>alert_rules</c>). Every rule and field has
/// a documented default; a document that leaves out a rule or field keeps its default.
/// </summary>
public sealed record AlertRuleSettings
{
    /// <summary>The defaults.</summary>
    public static AlertRuleSettings Default { get; } = new();

    /// <summary>Thresholds of <c>gated_burst</c>.</summary>
    public GatedBurstRule GatedBurst { get; init; } = new();

    /// <summary>Thresholds of <c>inconsistent_sensor</c>.</summary>
    public InconsistentSensorRule InconsistentSensor { get; init; } = new();

    /// <summary>Thresholds of <c>gnss_silent_while_moving</c>.</summary>
    public GnssSilentRule GnssSilentWhileMoving { get; init; } = new();

    /// <summary>Thresholds of <c>track_reset</c>.</summary>
    public TrackResetRule TrackReset { get; init; } = new();

    /// <summary>Thresholds of <c>wheel_scale_out_of_band</c>.</summary>
    public WheelScaleRule WheelScaleOutOfBand { get; init; } = new();

    /// <summary>Thresholds of <c>moved_without_driving</c>.</summary>
    public MovedWithoutDrivingRule MovedWithoutDriving { get; init; } = new();

    /// <summary>Thresholds of <c>sensor_isolated</c>.</summary>
    public SensorIsolatedRule SensorIsolated { get; init; } = new();

    /// <summary>Thresholds of <c>vehicle_silent</c>.</summary>
    public VehicleSilentRule VehicleSilent { get; init; } = new();

    /// <summary>The first invalid field as "field: reason" (e.g. "gated_burst.window_s: must be ..."), or null.</summary>
    public string? Validate() =>
        (GatedBurst is null ? "gated_burst: must be an object" : GatedBurst.Validate("gated_burst"))
        ?? (InconsistentSensor is null ? "inconsistent_sensor: must be an object" : InconsistentSensor.Validate("inconsistent_sensor"))
        ?? (GnssSilentWhileMoving is null ? "gnss_silent_while_moving: must be an object" : GnssSilentWhileMoving.Validate("gnss_silent_while_moving"))
        ?? (TrackReset is null ? "track_reset: must be an object" : TrackReset.Validate("track_reset"))
        ?? (WheelScaleOutOfBand is null ? "wheel_scale_out_of_band: must be an object" : WheelScaleOutOfBand.Validate("wheel_scale_out_of_band"))
        ?? (MovedWithoutDriving is null ? "moved_without_driving: must be an object" : MovedWithoutDriving.Validate("moved_without_driving"))
        ?? (SensorIsolated is null ? "sensor_isolated: must be an object" : SensorIsolated.Validate("sensor_isolated"))
        ?? (VehicleSilent is null ? "vehicle_silent: must be an object" : VehicleSilent.Validate("vehicle_silent"));
}
