// One message of the service's ingest API.
namespace FusionService.Simulator.Messages;

/// <summary>
/// One message of the ingest API (one NDJSON line), serialised by <see cref="TelemetryJson"/>. Which optional members are
/// set depends on <see cref="Kind"/>: gnss sets latitude, longitude, accuracy and its kind, and optionally speed, course
/// and speed accuracy; wheel sets the speed; imu sets the yaw rate and optionally the acceleration. Members that do not
/// belong to the kind are null and not written.
/// </summary>
/// <param name="Vehicle">Vehicle id, e.g. "van-01" (JSON <c>vehicle</c>).</param>
/// <param name="Kind">One of <see cref="TelemetryKinds"/> (JSON <c>kind</c>).</param>
/// <param name="TimeUs">Measurement time, microseconds since the Unix epoch, UTC (JSON <c>time</c>, RFC 3339 with microseconds).</param>
/// <param name="Id">Message id, unique per message of a vehicle; a resent message keeps its id (JSON <c>id</c>).</param>
public sealed record TelemetryMessage(string Vehicle, string Kind, long TimeUs, string Id)
{
    /// <summary>gnss: latitude, degrees, WGS-84 (JSON <c>lat_deg</c>).</summary>
    public double? LatDeg { get; init; }

    /// <summary>gnss: longitude, degrees, WGS-84 (JSON <c>lon_deg</c>).</summary>
    public double? LonDeg { get; init; }

    /// <summary>gnss: horizontal accuracy, metres, in the convention of <see cref="AccuracyKind"/> (JSON <c>accuracy_m</c>).</summary>
    public double? AccuracyM { get; init; }

    /// <summary>gnss: accuracy convention, <see cref="TelemetryKinds.OneSigma"/> (JSON <c>accuracy_kind</c>).</summary>
    public string? AccuracyKind { get; init; }

    /// <summary>gnss: speed over ground, m/s; wheel: wheel speed, m/s (JSON <c>speed_mps</c>).</summary>
    public double? SpeedMps { get; init; }

    /// <summary>gnss, optional: course over ground, degrees clockwise from true north (JSON <c>course_deg</c>).</summary>
    public double? CourseDeg { get; init; }

    /// <summary>gnss, optional: 1-sigma speed accuracy, m/s (JSON <c>speed_accuracy_mps</c>).</summary>
    public double? SpeedAccuracyMps { get; init; }

    /// <summary>imu: yaw rate about the up axis, degrees per second, positive counter-clockwise (JSON <c>yaw_rate_dps</c>).</summary>
    public double? YawRateDps { get; init; }

    /// <summary>imu, optional: longitudinal acceleration, m/s² (JSON <c>accel_mps2</c>).</summary>
    public double? AccelMps2 { get; init; }
}
