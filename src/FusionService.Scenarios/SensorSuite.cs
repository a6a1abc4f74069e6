// What sensors a simulated van carries and how they err.
using FusionService.Estimation.Models;

namespace FusionService.Scenarios;

/// <summary>
/// Sensors of a simulated van for <see cref="MeasurementGenerator"/>: rates, noise, biases and GNSS degradations.
/// Sample noise sigmas default to <see cref="NoiseProfile.DeliveryVan"/>; the other defaults are invented demo values
/// in the ranges of the project's check values (GNSS at 1 Hz; 0.5 deg/s consumer gyro bias; a 3 % wheel scale error).
/// </summary>
public sealed record SensorSuite
{
    /// <summary>Whether GNSS position fixes are produced. Default true.</summary>
    public bool GnssPositionEnabled { get; init; } = true;

    /// <summary>GNSS position period, microseconds. Default 1 000 000 (1 Hz).</summary>
    public long GnssPositionPeriodUs { get; init; } = 1_000_000;

    /// <summary>Open-sky 1-sigma per-axis GNSS position error, metres; also the reported accuracy. Default 3.</summary>
    public double GnssSigmaM { get; init; } = 3.0;

    /// <summary>Spans of degraded GNSS position (the first span containing a fix applies). Default none.</summary>
    public IReadOnlyList<UrbanCanyon> UrbanCanyons { get; init; } = [];

    /// <summary>Probability that a fix outside an outage is an outlier, in [0, 1]. Default 0.</summary>
    public double OutlierProbability { get; init; }

    /// <summary>Smallest outlier error, metres. An outlier's error is a jump alone (no other noise). Default 30.</summary>
    public double OutlierMinM { get; init; } = 30.0;

    /// <summary>Largest outlier error, metres; the jump length is uniform in [min, max) in a uniform direction. Default 100.</summary>
    public double OutlierMaxM { get; init; } = 100.0;

    /// <summary>Spans with no GNSS at all (neither position nor velocity). Default none.</summary>
    public IReadOnlyList<TimeInterval> GnssOutages { get; init; } = [];

    /// <summary>Whether GNSS speed and course are produced. Default true.</summary>
    public bool GnssVelocityEnabled { get; init; } = true;

    /// <summary>GNSS velocity period, microseconds. Default 1 000 000 (1 Hz).</summary>
    public long GnssVelocityPeriodUs { get; init; } = 1_000_000;

    /// <summary>
    /// 1-sigma GNSS speed error, m/s; also the reported accuracy. The course error is Gaussian with sigma
    /// speed sigma / measured speed (radians), the angular spread of an isotropic velocity error. Default 0.1.
    /// </summary>
    public double GnssSpeedSigmaMps { get; init; } = 0.1;

    /// <summary>Below this measured speed the course is reported as NaN (absent), m/s. Default 1.</summary>
    public double CourseMinSpeedMps { get; init; } = 1.0;

    /// <summary>Whether wheel speeds are produced. Default true.</summary>
    public bool WheelSpeedEnabled { get; init; } = true;

    /// <summary>Wheel-speed period, microseconds. Default 100 000 (10 Hz).</summary>
    public long WheelSpeedPeriodUs { get; init; } = 100_000;

    /// <summary>Wheel-speed scale factor (reads speed x scale) when the truth carries none. Default 1.03.</summary>
    public double WheelScale { get; init; } = 1.03;

    /// <summary>1-sigma wheel-speed noise, m/s. Default <see cref="NoiseProfile.WheelSpeedSigmaMps"/> of the delivery van.</summary>
    public double WheelSpeedSigmaMps { get; init; } = NoiseProfile.DeliveryVan.WheelSpeedSigmaMps;

    /// <summary>When true (default) a wheel sensor reads exactly 0 while the true speed is exactly 0 (no encoder ticks).</summary>
    public bool WheelSpeedZeroAtStandstill { get; init; } = true;

    /// <summary>Whether IMU samples are produced. Default true.</summary>
    public bool ImuEnabled { get; init; } = true;

    /// <summary>IMU period, microseconds. Default 100 000 (10 Hz).</summary>
    public long ImuPeriodUs { get; init; } = 100_000;

    /// <summary>Gyro yaw-rate bias, rad/s (reads yaw rate + bias) when the truth carries none. Default 0.5 deg/s.</summary>
    public double GyroBiasRps { get; init; } = 0.5 * Math.PI / 180.0;

    /// <summary>1-sigma gyro noise, rad/s. Default <see cref="NoiseProfile.GyroSigmaRps"/> of the delivery van.</summary>
    public double GyroSigmaRps { get; init; } = NoiseProfile.DeliveryVan.GyroSigmaRps;

    /// <summary>Whether IMU samples carry a longitudinal acceleration (otherwise NaN). Default true.</summary>
    public bool AccelerometerPresent { get; init; } = true;

    /// <summary>1-sigma longitudinal accelerometer noise, m/s². Default <see cref="NoiseProfile.AccelSigmaMps2"/> of the delivery van.</summary>
    public double AccelSigmaMps2 { get; init; } = NoiseProfile.DeliveryVan.AccelSigmaMps2;

    /// <summary>A suite with the defaults and the sample-noise sigmas of <paramref name="profile"/>.</summary>
    /// <param name="profile">Noise profile whose wheel, gyro and accelerometer sigmas to use.</param>
    public static SensorSuite ForProfile(NoiseProfile profile)
    {
        ArgumentNullException.ThrowIfNull(profile);
        return new SensorSuite
        {
            WheelSpeedSigmaMps = profile.WheelSpeedSigmaMps,
            GyroSigmaRps = profile.GyroSigmaRps,
            AccelSigmaMps2 = profile.AccelSigmaMps2,
        };
    }

    /// <summary>Throws <see cref="ArgumentException"/> naming the first inconsistent value.</summary>
    public void Validate()
    {
        Positive(GnssPositionPeriodUs, nameof(GnssPositionPeriodUs));
        Positive(GnssSigmaM, nameof(GnssSigmaM));
        Positive(GnssVelocityPeriodUs, nameof(GnssVelocityPeriodUs));
        Positive(GnssSpeedSigmaMps, nameof(GnssSpeedSigmaMps));
        NonNegative(CourseMinSpeedMps, nameof(CourseMinSpeedMps));
        Positive(WheelSpeedPeriodUs, nameof(WheelSpeedPeriodUs));
        Positive(WheelScale, nameof(WheelScale));
        Positive(WheelSpeedSigmaMps, nameof(WheelSpeedSigmaMps));
        Positive(ImuPeriodUs, nameof(ImuPeriodUs));
        Finite(GyroBiasRps, nameof(GyroBiasRps));
        Positive(GyroSigmaRps, nameof(GyroSigmaRps));
        Positive(AccelSigmaMps2, nameof(AccelSigmaMps2));
        if (!(OutlierProbability >= 0 && OutlierProbability <= 1))
        {
            throw new ArgumentException($"OutlierProbability must be within [0, 1], was {OutlierProbability}.", nameof(OutlierProbability));
        }

        Positive(OutlierMinM, nameof(OutlierMinM));
        if (!(OutlierMaxM >= OutlierMinM) || !double.IsFinite(OutlierMaxM))
        {
            throw new ArgumentException($"OutlierMaxM must be finite and not below OutlierMinM, was {OutlierMaxM}.", nameof(OutlierMaxM));
        }

        ArgumentNullException.ThrowIfNull(UrbanCanyons);
        ArgumentNullException.ThrowIfNull(GnssOutages);
        foreach (TimeInterval outage in GnssOutages)
        {
            if (outage.EndTimeUs < outage.StartTimeUs)
            {
                throw new ArgumentException($"outage {outage} ends before it starts.", nameof(GnssOutages));
            }
        }

        foreach (UrbanCanyon canyon in UrbanCanyons)
        {
            if (canyon.Span.EndTimeUs < canyon.Span.StartTimeUs || !double.IsFinite(canyon.BiasEastM) || !double.IsFinite(canyon.BiasNorthM)
                || !(canyon.SigmaM > 0) || !double.IsFinite(canyon.SigmaM) || !(canyon.DegreesOfFreedom > 2)
                || (canyon.ReportedSigmaM is double r && (!(r > 0) || !double.IsFinite(r))))
            {
                throw new ArgumentException($"urban canyon {canyon} is inconsistent (span order, finite bias, sigma > 0, dof > 2).", nameof(UrbanCanyons));
            }
        }
    }

    private static void Positive(double value, string name)
    {
        if (!double.IsFinite(value) || value <= 0)
        {
            throw new ArgumentException($"{name} must be finite and positive, was {value}.", name);
        }
    }

    private static void NonNegative(double value, string name)
    {
        if (!double.IsFinite(value) || value < 0)
        {
            throw new ArgumentException($"{name} must be finite and non-negative, was {value}.", name);
        }
    }

    private static void Finite(double value, string name)
    {
        if (!double.IsFinite(value))
        {
            throw new ArgumentException($"{name} must be finite, was {value}.", name);
        }
    }
}
