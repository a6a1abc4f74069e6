// Driving limits and style of a simulated delivery van.
namespace FusionService.Scenarios;

/// <summary>
/// Limits and style of <see cref="RouteDriver"/>. Defaults describe a delivery van in town (common practice,
/// values from memory as listed in the project's check values: acceleration 0.1-0.3 g, braking up to 0.6-0.8 g,
/// lateral up to 0.4 g, yaw rate up to 30 deg/s on the road); speeds and radii are invented demo values.
/// </summary>
public sealed record RouteDriverOptions
{
    /// <summary>Standard acceleration of gravity, m/s² (CGPM 1901, published: 9.80665).</summary>
    public const double StandardGravityMps2 = 9.80665;

    /// <summary>Default start time: 2026-01-01T00:00:00Z in Unix microseconds.</summary>
    public const long DefaultStartTimeUs = 1_767_225_600_000_000;

    /// <summary>Latitude of the local frame's origin, degrees. Default <see cref="InventedPlace.LatitudeDeg"/> (open sea).</summary>
    public double OriginLatitudeDeg { get; init; } = InventedPlace.LatitudeDeg;

    /// <summary>Longitude of the local frame's origin, degrees. Default <see cref="InventedPlace.LongitudeDeg"/> (open sea).</summary>
    public double OriginLongitudeDeg { get; init; } = InventedPlace.LongitudeDeg;

    /// <summary>Time of the first truth sample, Unix microseconds. Default <see cref="DefaultStartTimeUs"/>.</summary>
    public long StartTimeUs { get; init; } = DefaultStartTimeUs;

    /// <summary>Truth sample period, microseconds. Default 10 000 (100 Hz).</summary>
    public long SamplePeriodUs { get; init; } = 10_000;

    /// <summary>Lowest cruise speed drawn for a straight leg, m/s. Default 8.0 (about 29 km/h).</summary>
    public double CruiseSpeedMinMps { get; init; } = 8.0;

    /// <summary>Highest cruise speed drawn for a straight leg, m/s. Default 13.5 (about 49 km/h).</summary>
    public double CruiseSpeedMaxMps { get; init; } = 13.5;

    /// <summary>Lowest acceleration drawn for a leg, m/s². Default 0.1 g.</summary>
    public double AccelMinMps2 { get; init; } = 0.1 * StandardGravityMps2;

    /// <summary>Highest acceleration drawn for a leg, m/s²; the truth never accelerates harder. Default 0.3 g.</summary>
    public double AccelMaxMps2 { get; init; } = 0.3 * StandardGravityMps2;

    /// <summary>Lowest braking deceleration drawn for a leg, m/s² (positive). Default 0.2 g.</summary>
    public double BrakeMinMps2 { get; init; } = 0.2 * StandardGravityMps2;

    /// <summary>Highest braking deceleration drawn for a leg, m/s² (positive); the truth never brakes harder. Default 0.6 g.</summary>
    public double BrakeMaxMps2 { get; init; } = 0.6 * StandardGravityMps2;

    /// <summary>Largest lateral (centripetal) acceleration, m/s²; corners are taken slowly enough. Default 0.4 g.</summary>
    public double MaxLateralAccelMps2 { get; init; } = 0.4 * StandardGravityMps2;

    /// <summary>Largest yaw rate magnitude, rad/s. Default 30 deg/s.</summary>
    public double MaxYawRateRps { get; init; } = 30.0 * Math.PI / 180.0;

    /// <summary>Radius of rounded corners, metres (shrunk where a leg is too short). Default 10.</summary>
    public double CornerRadiusM { get; init; } = 10.0;

    /// <summary>Throws <see cref="ArgumentException"/> naming the first inconsistent value.</summary>
    public void Validate()
    {
        Positive(SamplePeriodUs, nameof(SamplePeriodUs));
        Positive(CruiseSpeedMinMps, nameof(CruiseSpeedMinMps));
        Ordered(CruiseSpeedMinMps, CruiseSpeedMaxMps, nameof(CruiseSpeedMaxMps));
        Positive(AccelMinMps2, nameof(AccelMinMps2));
        Ordered(AccelMinMps2, AccelMaxMps2, nameof(AccelMaxMps2));
        Positive(BrakeMinMps2, nameof(BrakeMinMps2));
        Ordered(BrakeMinMps2, BrakeMaxMps2, nameof(BrakeMaxMps2));
        Positive(MaxLateralAccelMps2, nameof(MaxLateralAccelMps2));
        Positive(MaxYawRateRps, nameof(MaxYawRateRps));
        Positive(CornerRadiusM, nameof(CornerRadiusM));
        _ = new ScenarioFrame(OriginLatitudeDeg, OriginLongitudeDeg);
    }

    private static void Positive(double value, string name)
    {
        if (!double.IsFinite(value) || value <= 0)
        {
            throw new ArgumentException($"{name} must be finite and positive, was {value}.", name);
        }
    }

    private static void Ordered(double min, double max, string name)
    {
        if (!double.IsFinite(max) || max < min)
        {
            throw new ArgumentException($"{name} must be finite and not below its minimum, was {max}.", name);
        }
    }
}
