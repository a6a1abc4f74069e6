using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tests.Tracking;
using FusionService.Estimation.Tracking;

namespace FusionService.Estimation.Tests.Reference;

/// <summary>
/// The fast fixed-size filter against the dense MathNet reference (<see cref="ReferenceVehicleEkf"/>) on the same
/// measurements: states to 1e-9 relative, covariances to 1e-9 of sqrt(Pii Pjj), identical gate decisions.
/// </summary>
public sealed class FastFilterAgainstReferenceTests
{
    [Theory]
    [InlineData(21)]
    [InlineData(22)]
    public void Fast_filter_equals_dense_reference(int seed)
    {
        var drive = SimpleDrive.Create(seed, durationS: 200, gyroBiasRps: 0.006, wheelScale: 1.03);
        // The dense reference implements the filter's algebra and gate, not the multipath step rule (which only decides
        // whether a fix is fused): off here, so both see the same updates.
        var options = new TrackOptions { MultipathStepProbability = 0 };
        var processor = new TrackProcessor(options, NoiseProfile.DeliveryVan);
        TrackState state = TrackState.Empty;
        int i = 0;
        while (state.Phase != TrackPhase.Running)
        {
            processor.Process(ref state, drive.Measurements[i++]);
        }

        var reference = new ReferenceVehicleEkf(state, options, NoiseProfile.DeliveryVan);
        int compared = 0;
        for (; i < drive.Measurements.Count; i++)
        {
            Measurement m = drive.Measurements[i];
            OutcomeKind fast = processor.Process(ref state, m).Kind;
            OutcomeKind dense = reference.Process(m);
            Assert.Equal(dense, fast);
            for (int a = 0; a < StateIndex.Count; a++)
            {
                double expected = reference.Mean[a];
                AssertNear.Equal(expected, state.X[a], 1e-9 * Math.Max(1.0, Math.Abs(expected)), $"state[{a}] after measurement {i}");
                for (int b = 0; b < StateIndex.Count; b++)
                {
                    double scale = Math.Sqrt(reference.Covariance[a, a] * reference.Covariance[b, b]);
                    AssertNear.Equal(reference.Covariance[a, b], state.P[(a * StateIndex.Count) + b], 1e-9 * scale, $"P[{a},{b}] after measurement {i}");
                }
            }

            compared++;
        }

        Assert.True(compared > 3000, $"compared only {compared} steps");
    }
}
