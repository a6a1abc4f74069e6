using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;
using FusionService.Scenarios;
using Xunit.Abstractions;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Consistency;

/// <summary>
/// Issue 12: on drives whose GNSS error is correlated over a minute (a consumer receiver, <see cref="RealisticDrives"/>),
/// the filter with its default options must not claim more than it knows: the truth lies inside the filtered and the
/// smoothed 95 % ellipses at least 93 % of the time (the lower end of the product's 93-97 % target; the upper end and the
/// other scenarios are measured by `./build.sh bench consistency`, docs/estimation.md). Before the correlated error was
/// modelled, the same kind of drive gave 26-52 %.
/// </summary>
/// <remarks>
/// Sixteen drives: a half-hour drive holds only about 15 independent stretches of an error correlated over a minute, so
/// one drive's containment is a coarse sample (on the first three of these drives the smoothed ellipse held 100, 82.6
/// and 100 % with the fixed error model, 100, 73.9 and 100 % with the per-receiver fit); three drives, as this test had,
/// judged mostly one of them.
/// </remarks>
public sealed class CorrelatedGnssContainmentTests(ITestOutputHelper output)
{
    // Upper 5 % point of chi-square with 2 dof, -2 ln 0.05 (NIST/SEMATECH handbook 1.3.6.7.4; derived).
    private const double Inside95 = 5.991464547107979;

    private const int Drives = 16;

    [Fact]
    public void Issue12_truth_lies_inside_the_95_percent_ellipse_on_correlated_clean_sky_drives()
    {
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        long filtered = 0, filteredInside = 0, smoothed = 0, smoothedInside = 0;
        for (int r = 0; r < Drives; r++)
        {
            ScenarioRun run = RealisticDrives.CleanSky(1201 + (r * 100)).Generate();
            ReplayResult replay = TrackReplay.Run(processor, TrackState.Empty, run.Measurements);
            foreach (IReadOnlyList<ForwardStep> segment in replay.Forward)
            {
                foreach (ForwardStep step in segment)
                {
                    if (step.TimeUs % 1_000_000 == 0 && run.Truth.Covers(step.TimeUs))
                    {
                        filtered++;
                        filteredInside += Mahalanobis2(run.Truth, step.TimeUs, step.Plane, step.Filtered, step.FilteredCovariance) <= Inside95 ? 1 : 0;
                    }
                }
            }

            foreach (SmoothedSegment segment in replay.Smoothed)
            {
                for (int k = 0; k < segment.Count; k++)
                {
                    if (segment.TimesUs[k] % 1_000_000 == 0 && run.Truth.Covers(segment.TimesUs[k]))
                    {
                        smoothed++;
                        smoothedInside += Mahalanobis2(run.Truth, segment.TimesUs[k], segment.Planes[k], segment.Means[k], segment.Covariances[k]) <= Inside95 ? 1 : 0;
                    }
                }
            }
        }

        double filteredShare = (double)filteredInside / filtered, smoothedShare = (double)smoothedInside / smoothed;
        output.WriteLine($"inside the 95 % ellipse: filtered {filteredShare:P1} of {filtered} s, smoothed {smoothedShare:P1} of {smoothed} s");
        Assert.True(filtered > Drives * 1000 && smoothed > Drives * 1000, "too few whole-second states compared");
        Assert.True(filteredShare >= 0.93, $"filtered containment {filteredShare:P1}");
        Assert.True(smoothedShare >= 0.93, $"smoothed containment {smoothedShare:P1}");
    }

    private static double Mahalanobis2(TruthTrajectory truth, long timeUs, LocalTangentPlane plane, in StateVector x, in StateMatrix p)
    {
        (double de, double dn) = truth.OffsetOf(timeUs, plane, x[EastM], x[NorthM]);
        double a = p[0], b = p[1], c = p[StateMatrix.Size + 1];
        return ((c * de * de) - (2 * b * de * dn) + (a * dn * dn)) / ((a * c) - (b * b));
    }
}
