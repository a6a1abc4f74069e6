// Seeded demo data shared by the benchmarks: one invented delivery round and its sensor stream.
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using FusionService.Scenarios;

namespace FusionService.Benchmarks;

/// <summary>
/// The delivery round every benchmark runs on: van 0 of the demo town, 12 stops of 30 to 90 s, fleet seed 20261202,
/// sensor seed 5; default sensor suite for the delivery-van profile (1 Hz GNSS position and velocity, 10 Hz wheel
/// speed, 10 Hz IMU). All values are invented demo data.
/// </summary>
internal sealed class BenchmarkScenario
{
    private static readonly Lazy<BenchmarkScenario> Shared = new(() => new BenchmarkScenario());

    private BenchmarkScenario()
    {
        TruthTrajectory truth = new DeliveryNetwork().PlanRound(0, stopCount: 12, seed: 20261202, minDwellS: 30, maxDwellS: 90).Drive();
        ScenarioRun run = MeasurementGenerator.Generate(truth, SensorSuite.ForProfile(NoiseProfile.DeliveryVan), seed: 5);
        Measurements = [.. run.Measurements];
        StartTimeUs = truth.StartTimeUs;
        EndTimeUs = truth.EndTimeUs;
    }

    /// <summary>The one instance (built on first use).</summary>
    public static BenchmarkScenario Instance => Shared.Value;

    /// <summary>Options of every track in the benchmarks (defaults: 60 s lag window, 5 s checkpoints).</summary>
    public static TrackOptions Options { get; } = new();

    /// <summary>The whole stream in canonical order.</summary>
    public Measurement[] Measurements { get; }

    /// <summary>Start of the truth, Unix microseconds.</summary>
    public long StartTimeUs { get; }

    /// <summary>End of the truth, Unix microseconds.</summary>
    public long EndTimeUs { get; }

    /// <summary>Measurements with start + fromS &lt;= time &lt; start + toS, in canonical order.</summary>
    public Measurement[] Between(double fromS, double toS)
    {
        long from = StartTimeUs + (long)(fromS * 1e6), to = StartTimeUs + (long)(toS * 1e6);
        return Measurements.Where(m => m.TimeUs >= from && m.TimeUs < to).ToArray();
    }

    /// <summary>
    /// Runs the stream through a fresh processor state from the start until at least <paramref name="warmUpS"/> seconds,
    /// then on until the track is running, not stationary and moving faster than 3 m/s, so that the dense reference
    /// (which covers only the moving, running phase) starts from the same state.
    /// </summary>
    /// <returns>The state and the index of the first measurement it does not include.</returns>
    public (TrackState State, int Next) WarmState(TrackProcessor processor, double warmUpS)
    {
        TrackState state = TrackState.Empty;
        long until = StartTimeUs + (long)(warmUpS * 1e6);
        int i = 0;
        while (i < Measurements.Length)
        {
            processor.Process(ref state, Measurements[i]);
            i++;
            bool ready = state.Phase == TrackPhase.Running && !state.Stationary && state.X[StateIndex.SpeedMps] > 3.0;
            if (Measurements[i - 1].TimeUs >= until && ready && (i == Measurements.Length || Measurements[i].TimeUs > state.TimeUs))
            {
                return (state, i);
            }
        }

        throw new InvalidOperationException("the scenario never reached a moving, running track");
    }
}
