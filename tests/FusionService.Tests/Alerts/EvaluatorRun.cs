// Runs the estimation core over measurements and feeds its outcomes to an AlertEvaluator (no service, no I/O).
using FusionService.Alerts;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using FusionService.Scenarios;
using FusionService.Storage.Alerts;

namespace FusionService.Tests.Alerts;

/// <summary>
/// A delivery round of the invented town (seeded, <see cref="DeliveryNetwork"/> + <see cref="MeasurementGenerator"/>,
/// without canyons, outages or outliers unless a test adds them) processed by a <see cref="VehicleTrack"/> whose outcomes
/// go to an <see cref="AlertEvaluator"/>; changes are taken every <see cref="BatchSize"/> measurements, as a grain does per batch.
/// </summary>
internal sealed class EvaluatorRun : ITrackObserver
{
    private readonly AlertEvaluator _evaluator;

    private EvaluatorRun(AlertRuleSettings settings) => _evaluator = new AlertEvaluator(settings);

    public const int BatchSize = 50;

    public List<AlertObservation> Observations { get; } = [];

    /// <summary>A clean round: 4 stops, 3 m GNSS, wheel scale 1.008 (inside the default band).</summary>
    public static (TruthTrajectory Truth, SensorSuite Suite) CleanRound(int seed, double wheelScale = 1.008)
    {
        var network = new DeliveryNetwork(laneCount: 10, streetCount: 8, blockM: 120.0, originLatitudeDeg: 46.12, originLongitudeDeg: 8.47);
        var truth = network.PlanRound(vanIndex: 2, stopCount: 4, seed: seed, minDwellS: 60, maxDwellS: 120).Drive(new RouteDriverOptions
        {
            OriginLatitudeDeg = 46.12,
            OriginLongitudeDeg = 8.47,
        });
        var suite = SensorSuite.ForProfile(NoiseProfile.DeliveryVan) with { WheelScale = wheelScale, GyroBiasRps = 0.2 * Math.PI / 180 };
        return (truth, suite);
    }

    public static List<AlertObservation> Run(IEnumerable<Measurement> measurements, AlertRuleSettings? settings = null, NoiseProfile? profile = null)
    {
        var run = new EvaluatorRun(settings ?? AlertRuleSettings.Default);
        var track = new VehicleTrack(new TrackOptions(), profile ?? NoiseProfile.DeliveryVan);
        int n = 0;
        foreach (var m in measurements)
        {
            track.Process(m, run);
            if (++n % BatchSize == 0)
            {
                run.Observations.AddRange(run._evaluator.TakeChanges());
            }
        }

        run.Observations.AddRange(run._evaluator.TakeChanges());
        return run.Observations;
    }

    public void OnOutcome(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay) =>
        _evaluator.Observe(m, outcome, posterior, isReplay);
}
