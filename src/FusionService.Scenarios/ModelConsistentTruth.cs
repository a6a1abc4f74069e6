// Truth that follows the filter's own CTRA model with process noise drawn from its own Q.
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Models;

namespace FusionService.Scenarios;

/// <summary>
/// Generates truth by the filter's own motion model: x_{k+1} = f(x_k, T) + w_k with w_k ~ N(0, Q(x_k, T)), where f is
/// <see cref="CtraMotionModel.Predict"/> and Q is built by <see cref="CtraMotionModel.AddProcessNoise"/> into a zero
/// matrix at the prior state (the same linearisation point the filter uses). For Monte Carlo consistency tests
/// (NEES / NIS), where the truth must follow the filter's model exactly. Deterministic for a given seed.
/// </summary>
/// <remarks>
/// w_k = L z with L Lᵀ = Q (Cholesky, zero pivots allowed) and z standard normal. The eight state components,
/// including the gyro bias and wheel scale, are truth; the trajectory carries the last two as
/// <see cref="TruthTrajectory.SensorErrors"/>. The truth is sampled only at the propagation steps; measurements off
/// those instants would be interpolated and would no longer follow the model, so use sensor periods that are
/// multiples of <see cref="ModelConsistentTruthOptions.StepUs"/>.
/// </remarks>
public static class ModelConsistentTruth
{
    private const ulong ProcessNoiseStream = 0x4D4F44454CUL;

    /// <summary>Propagates the initial state of <paramref name="options"/> for its duration and returns the sampled truth.</summary>
    /// <param name="options">Noise profile, step, duration and initial state.</param>
    /// <param name="seed">Seed of the process-noise draws.</param>
    public static TruthTrajectory Generate(ModelConsistentTruthOptions options, int seed)
    {
        ArgumentNullException.ThrowIfNull(options);
        options.Profile.Validate();
        if (options.StepUs <= 0)
        {
            throw new ArgumentOutOfRangeException(nameof(options), options.StepUs, "StepUs must be positive");
        }

        long durationUs = (long)Math.Round(options.DurationS * 1e6);
        if (!double.IsFinite(options.DurationS) || durationUs < options.StepUs)
        {
            throw new ArgumentOutOfRangeException(nameof(options), options.DurationS, "DurationS must cover at least one step");
        }

        int steps = checked((int)(durationUs / options.StepUs));
        double dtS = options.StepUs / 1e6;
        var rng = new ScenarioRandom(seed, ProcessNoiseStream);
        StateVector x = default;
        x[StateIndex.EastM] = options.InitialEastM;
        x[StateIndex.NorthM] = options.InitialNorthM;
        x[StateIndex.HeadingRad] = Angles.WrapPi(options.InitialHeadingRad);
        x[StateIndex.SpeedMps] = options.InitialSpeedMps;
        x[StateIndex.YawRateRps] = options.InitialYawRateRps;
        x[StateIndex.AccelMps2] = options.InitialAccelMps2;
        x[StateIndex.GyroBiasRps] = options.InitialGyroBiasRps;
        x[StateIndex.WheelScale] = options.InitialWheelScale;
        for (int i = 0; i < StateVector.Length; i++)
        {
            if (!double.IsFinite(x[i]))
            {
                throw new ArgumentException($"initial state component {i} is not finite", nameof(options));
            }
        }

        var samples = new TruthSample[steps + 1];
        var errors = new SensorErrorSample[steps + 1];
        Record(x, options.StartTimeUs, out samples[0], out errors[0]);
        Span<double> z = stackalloc double[StateIndex.VehicleCount];
        for (int k = 1; k <= steps; k++)
        {
            Step(ref x, dtS, options, rng, z);
            Record(x, options.StartTimeUs + (k * options.StepUs), out samples[k], out errors[k]);
        }

        return new TruthTrajectory(options.OriginLatitudeDeg, options.OriginLongitudeDeg, samples, errors);
    }

    /// <summary>The vehicle's eight components of a sample pair, in <see cref="StateIndex"/> order (the GNSS error states zero).</summary>
    /// <param name="motion">Motion components.</param>
    /// <param name="sensorErrors">Sensor-error components.</param>
    public static StateVector ToStateVector(in TruthSample motion, in SensorErrorSample sensorErrors)
    {
        StateVector x = default;
        x[StateIndex.EastM] = motion.EastM;
        x[StateIndex.NorthM] = motion.NorthM;
        x[StateIndex.HeadingRad] = motion.HeadingRad;
        x[StateIndex.SpeedMps] = motion.SpeedMps;
        x[StateIndex.YawRateRps] = motion.YawRateRps;
        x[StateIndex.AccelMps2] = motion.AccelMps2;
        x[StateIndex.GyroBiasRps] = sensorErrors.GyroBiasRps;
        x[StateIndex.WheelScale] = sensorErrors.WheelScale;
        return x;
    }

    private static void Step(ref StateVector x, double dtS, ModelConsistentTruthOptions options, ScenarioRandom rng, Span<double> z)
    {
        StateMatrix q = default;
        CtraMotionModel.AddProcessNoise(ref q, x, dtS, options.Profile, options.Stationary);
        if (!options.SensorErrorsRandomWalk)
        {
            for (int i = 0; i < StateMatrix.Size; i++)
            {
                q[(StateIndex.GyroBiasRps * StateMatrix.Size) + i] = 0.0;
                q[(i * StateMatrix.Size) + StateIndex.GyroBiasRps] = 0.0;
                q[(StateIndex.WheelScale * StateMatrix.Size) + i] = 0.0;
                q[(i * StateMatrix.Size) + StateIndex.WheelScale] = 0.0;
            }
        }

        SemidefiniteCholesky.Factor(q, out StateMatrix lower);
        CtraMotionModel.Predict(ref x, dtS, out _);
        for (int i = 0; i < z.Length; i++)
        {
            z[i] = rng.NextGaussian();
        }

        // The vehicle's components only: the GNSS error states belong to the receiver, not to the motion.
        for (int i = 0; i < StateIndex.VehicleCount; i++)
        {
            double w = 0.0;
            for (int k = 0; k <= i; k++)
            {
                w += lower[(i * StateMatrix.Size) + k] * z[k];
            }

            x[i] += w;
        }

        x[StateIndex.HeadingRad] = Angles.WrapPi(x[StateIndex.HeadingRad]);
    }

    private static void Record(in StateVector x, long timeUs, out TruthSample sample, out SensorErrorSample errors)
    {
        sample = new TruthSample(
            timeUs, x[StateIndex.EastM], x[StateIndex.NorthM], x[StateIndex.HeadingRad], x[StateIndex.SpeedMps], x[StateIndex.YawRateRps], x[StateIndex.AccelMps2]);
        errors = new SensorErrorSample(timeUs, x[StateIndex.GyroBiasRps], x[StateIndex.WheelScale]);
    }
}
