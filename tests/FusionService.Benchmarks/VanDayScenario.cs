// Seeded demo data for the vehicle-day benchmark: about 8 h of invented delivery rounds of one van.
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Scenarios;

namespace FusionService.Benchmarks;

/// <summary>
/// One invented van day: consecutive 12-stop delivery rounds of van 2 of the demo town (round seeds 700 + i, sensor
/// seeds 800 + i, 1 % GNSS jumps, 10 min at the depot between rounds) until 8 h of data; 1 Hz GNSS position and
/// velocity, 10 Hz wheel and IMU. All values are invented demo data.
/// </summary>
internal sealed class VanDayScenario
{
    private static readonly Lazy<VanDayScenario> Shared = new(() => new VanDayScenario());

    private VanDayScenario()
    {
        var network = new DeliveryNetwork();
        var suite = SensorSuite.ForProfile(NoiseProfile.DeliveryVan) with { OutlierProbability = 0.01 };
        var all = new List<Measurement>();
        long startUs = RouteDriverOptions.DefaultStartTimeUs;
        long dayEndUs = startUs + (8L * 3600 * 1_000_000);
        for (int round = 0; startUs < dayEndUs; round++)
        {
            TruthTrajectory truth = network.PlanRound(vanIndex: 2, stopCount: 12, seed: 700 + round)
                .Drive(new RouteDriverOptions { StartTimeUs = startUs });
            all.AddRange(MeasurementGenerator.Generate(truth, suite, seed: 800 + round).Measurements);
            startUs = truth.EndTimeUs + 600_000_000;
        }

        Measurements = [.. all];
    }

    /// <summary>The one instance (built on first use).</summary>
    public static VanDayScenario Instance => Shared.Value;

    /// <summary>The whole day in canonical order.</summary>
    public Measurement[] Measurements { get; }
}
