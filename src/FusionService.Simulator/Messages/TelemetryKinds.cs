// The values of a telemetry message's "kind" field.
namespace FusionService.Simulator.Messages;

/// <summary>The values of <see cref="TelemetryMessage.Kind"/> (the ingest API's <c>kind</c> field).</summary>
public static class TelemetryKinds
{
    /// <summary>A GNSS fix: position with its accuracy, optionally speed and course over ground.</summary>
    public const string Gnss = "gnss";

    /// <summary>A wheel (odometer) speed.</summary>
    public const string Wheel = "wheel";

    /// <summary>An inertial sample: yaw rate, optionally longitudinal acceleration.</summary>
    public const string Imu = "imu";

    /// <summary>The only GNSS accuracy convention the simulator writes: 1-sigma per horizontal axis.</summary>
    public const string OneSigma = "one_sigma";
}
