// The API's names of the sensor kinds and of the filter's decisions.
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;

namespace FusionService.Audit;

/// <summary>Names the API uses for sensor kinds and outcomes (snake_case, as in the contracts).</summary>
public static class SensorNames
{
    /// <summary>Sensor kinds in response order.</summary>
    public static IReadOnlyList<SensorKind> All { get; } = [SensorKind.GnssPosition, SensorKind.GnssVelocity, SensorKind.WheelSpeed, SensorKind.Imu];

    /// <summary><c>gnss_position</c>, <c>gnss_velocity</c>, <c>wheel</c> or <c>imu</c>.</summary>
    public static string Of(SensorKind kind) => kind switch
    {
        SensorKind.GnssPosition => "gnss_position",
        SensorKind.GnssVelocity => "gnss_velocity",
        SensorKind.WheelSpeed => "wheel",
        SensorKind.Imu => "imu",
        _ => throw new ArgumentOutOfRangeException(nameof(kind), kind, "unknown sensor kind"),
    };

    /// <summary>The decision name of a core outcome: accepted, gated, too_late, duplicate, initialising, before_start, track_reset, unused, unusable.</summary>
    public static string Of(OutcomeKind kind) => kind switch
    {
        OutcomeKind.Accepted => "accepted",
        OutcomeKind.Gated => "gated",
        OutcomeKind.TooLate => "too_late",
        OutcomeKind.Duplicate or OutcomeKind.Conflict => "duplicate",
        OutcomeKind.Initialising => "initialising",
        OutcomeKind.BeforeStart => "before_start",
        OutcomeKind.TrackReset => "track_reset",
        OutcomeKind.Unusable => "unusable",
        _ => "unused",
    };
}
