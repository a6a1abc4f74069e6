// Settings of a truth that follows the filter's own motion model.
using FusionService.Estimation.Models;

namespace FusionService.Scenarios;

/// <summary>Settings of <see cref="ModelConsistentTruth"/>. Initial values are invented demo values.</summary>
/// <remarks>
/// The CTRA process noise is a white-jerk (triple integrator) model, so acceleration and yaw rate are random walks
/// and the truth wanders without bound: with the delivery-van jerk density q = 1 m²/s⁵ the speed spreads by
/// sqrt(q T³ / 3) = 18 m/s after 10 s and 95 m/s after 30 s (derived). Keep runs short or use smaller densities;
/// the sensor factories reject physically impossible values (for example speeds above 150 m/s).
/// </remarks>
public sealed record ModelConsistentTruthOptions
{
    /// <summary>Noise densities whose process covariance drives the truth. Default <see cref="NoiseProfile.DeliveryVan"/>.</summary>
    public NoiseProfile Profile { get; init; } = NoiseProfile.DeliveryVan;

    /// <summary>Propagation step and truth sample period, microseconds. Default 100 000 (10 Hz).</summary>
    public long StepUs { get; init; } = 100_000;

    /// <summary>Duration, seconds, at least one step. Default 10 (see the remarks on divergence).</summary>
    public double DurationS { get; init; } = 10.0;

    /// <summary>Time of the first sample, Unix microseconds. Default 2026-01-01T00:00:00Z.</summary>
    public long StartTimeUs { get; init; } = RouteDriverOptions.DefaultStartTimeUs;

    /// <summary>Latitude of the local frame's origin, degrees. Default <see cref="InventedPlace.LatitudeDeg"/> (open sea).</summary>
    public double OriginLatitudeDeg { get; init; } = InventedPlace.LatitudeDeg;

    /// <summary>Longitude of the local frame's origin, degrees. Default <see cref="InventedPlace.LongitudeDeg"/> (open sea).</summary>
    public double OriginLongitudeDeg { get; init; } = InventedPlace.LongitudeDeg;

    /// <summary>Initial east, metres. Default 0.</summary>
    public double InitialEastM { get; init; }

    /// <summary>Initial north, metres. Default 0.</summary>
    public double InitialNorthM { get; init; }

    /// <summary>Initial heading, radians from east, counter-clockwise. Default 0.</summary>
    public double InitialHeadingRad { get; init; }

    /// <summary>Initial speed, m/s. Default 10.</summary>
    public double InitialSpeedMps { get; init; } = 10.0;

    /// <summary>Initial yaw rate, rad/s. Default 0.</summary>
    public double InitialYawRateRps { get; init; }

    /// <summary>Initial longitudinal acceleration, m/s². Default 0.</summary>
    public double InitialAccelMps2 { get; init; }

    /// <summary>Initial gyro bias, rad/s. Default 0.5 deg/s.</summary>
    public double InitialGyroBiasRps { get; init; } = 0.5 * Math.PI / 180.0;

    /// <summary>Initial wheel-speed scale factor. Default 1.03.</summary>
    public double InitialWheelScale { get; init; } = 1.03;

    /// <summary>
    /// When true (default) the gyro bias and wheel scale follow the model's random walks; when false they stay at their
    /// initial values (their rows and columns of Q are zeroed).
    /// </summary>
    public bool SensorErrorsRandomWalk { get; init; } = true;

    /// <summary>Passed to <see cref="CtraMotionModel.AddProcessNoise"/>: switches the position random walk off. Default false.</summary>
    public bool Stationary { get; init; }
}
