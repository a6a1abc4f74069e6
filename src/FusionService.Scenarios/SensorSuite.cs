// What sensors a simulated van carries and how they err.
using FusionService.Estimation.Measurements;
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

    /// <summary>
    /// Fraction of the open-sky GNSS position error variance that is time-correlated, in [0, 1]. Default 0 (white errors,
    /// the output of the generator before the option existed). Per axis the error is a first-order Gauss-Markov part of
    /// standard deviation <see cref="GnssCorrelatedSigmaM"/> (time constant <see cref="GnssCorrelationTauS"/>, started
    /// from its stationary distribution) plus a white part of <see cref="GnssWhiteSigmaM"/>; the reported accuracy
    /// <see cref="GnssSigmaM"/> describes the total: σ_total² = σ_corr² + σ_white².
    /// </summary>
    /// <remarks>Brown and Hwang 2012, the first-order Gauss-Markov process (from memory); see <see cref="FirstOrderGaussMarkov"/>.</remarks>
    public double GnssCorrelatedVarianceFraction { get; init; }

    /// <summary>Time constant τ of the correlated GNSS position error, seconds, positive. Default 60 (consumer receivers: tens of seconds to minutes; an invented demo value).</summary>
    public double GnssCorrelationTauS { get; init; } = 60.0;

    /// <summary>Per-axis standard deviation of the correlated part: <see cref="GnssSigmaM"/> sqrt(fraction), metres.</summary>
    public double GnssCorrelatedSigmaM => GnssSigmaM * Math.Sqrt(GnssCorrelatedVarianceFraction);

    /// <summary>Per-axis standard deviation of the white part: <see cref="GnssSigmaM"/> sqrt(1 - fraction), metres.</summary>
    public double GnssWhiteSigmaM => GnssSigmaM * Math.Sqrt(1.0 - GnssCorrelatedVarianceFraction);

    /// <summary>Explicit multipath episodes: their bias is added to each position fix inside (not to outliers). Default none.</summary>
    public IReadOnlyList<MultipathEpisode> GnssMultipathEpisodes { get; init; } = [];

    /// <summary>Random multipath episodes over the whole truth, drawn from their own stream, besides the explicit ones; null (default) for none.</summary>
    public MultipathProcess? GnssRandomMultipath { get; init; }

    /// <summary>
    /// Factor on the reported accuracy of fixes inside a multipath episode, at least 1: the receiver notices a little,
    /// far less than the bias (mildly optimistic). Default 1.5 (invented demo value).
    /// </summary>
    public double GnssMultipathReportedSigmaScale { get; init; } = 1.5;

    /// <summary>
    /// A receiver that reports only HDOP: when set, every fix reports <see cref="HorizontalAccuracy.FromHdop"/>(HDOP,
    /// <see cref="GnssUereM"/>) as its accuracy instead of the configured sigmas (a constant geometry), whatever the true
    /// error; null (default) reports the configured sigmas. The errors themselves are unchanged, so the reported accuracy
    /// may over- or under-state them.
    /// </summary>
    public double? GnssReportedHdop { get; init; }

    /// <summary>User equivalent range error assumed with <see cref="GnssReportedHdop"/>, metres (1 sigma). Default 5, the ingest's default.</summary>
    public double GnssUereM { get; init; } = 5.0;

    /// <summary>
    /// Resolution to which GNSS course is reported, degrees; null (default) reports full precision. Rounding to a
    /// resolution makes a course within half a step below 360° read exactly 360° (2π radians), as some receivers write it.
    /// </summary>
    public double? GnssCourseResolutionDeg { get; init; }

    /// <summary>
    /// Spans in which the van is carried (towed, lifted, on a ferry): the truth moves and GNSS reports it, but the wheel
    /// sensor reads exactly 0 and the IMU reads a standstill (gyro bias + noise, acceleration noise only). Default none.
    /// </summary>
    public IReadOnlyList<TimeInterval> CarriedSpans { get; init; } = [];

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

    /// <summary>
    /// A suite with the defaults, the sample-noise sigmas of <paramref name="profile"/> and its GNSS error model: the
    /// correlated share <see cref="NoiseProfile.GnssCorrelatedFraction"/> with time constant
    /// <see cref="NoiseProfile.GnssErrorTimeConstantS"/> (data the filter's model describes).
    /// </summary>
    /// <param name="profile">Noise profile whose wheel, gyro and accelerometer sigmas and GNSS error model to use.</param>
    public static SensorSuite ForProfile(NoiseProfile profile)
    {
        ArgumentNullException.ThrowIfNull(profile);
        return new SensorSuite
        {
            WheelSpeedSigmaMps = profile.WheelSpeedSigmaMps,
            GyroSigmaRps = profile.GyroSigmaRps,
            AccelSigmaMps2 = profile.AccelSigmaMps2,
            GnssCorrelatedVarianceFraction = profile.GnssCorrelatedFraction,
            GnssCorrelationTauS = profile.GnssErrorTimeConstantS,
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

        if (!(GnssCorrelatedVarianceFraction >= 0 && GnssCorrelatedVarianceFraction <= 1))
        {
            throw new ArgumentException($"GnssCorrelatedVarianceFraction must be within [0, 1], was {GnssCorrelatedVarianceFraction}.", nameof(GnssCorrelatedVarianceFraction));
        }

        Positive(GnssCorrelationTauS, nameof(GnssCorrelationTauS));
        if (!double.IsFinite(GnssMultipathReportedSigmaScale) || GnssMultipathReportedSigmaScale < 1)
        {
            throw new ArgumentException($"GnssMultipathReportedSigmaScale must be finite and at least 1, was {GnssMultipathReportedSigmaScale}.", nameof(GnssMultipathReportedSigmaScale));
        }

        if (GnssReportedHdop is double hdop)
        {
            Positive(hdop, nameof(GnssReportedHdop));
        }

        Positive(GnssUereM, nameof(GnssUereM));
        if (GnssCourseResolutionDeg is double resolution)
        {
            Positive(resolution, nameof(GnssCourseResolutionDeg));
        }

        ArgumentNullException.ThrowIfNull(GnssMultipathEpisodes);
        foreach (MultipathEpisode episode in GnssMultipathEpisodes)
        {
            if (episode.Span.EndTimeUs < episode.Span.StartTimeUs || !double.IsFinite(episode.BiasEastM) || !double.IsFinite(episode.BiasNorthM))
            {
                throw new ArgumentException($"multipath episode {episode} is inconsistent (span order, finite bias).", nameof(GnssMultipathEpisodes));
            }
        }

        GnssRandomMultipath?.Validate();
        ArgumentNullException.ThrowIfNull(CarriedSpans);
        foreach (TimeInterval span in CarriedSpans)
        {
            if (span.EndTimeUs < span.StartTimeUs)
            {
                throw new ArgumentException($"carried span {span} ends before it starts.", nameof(CarriedSpans));
            }
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
