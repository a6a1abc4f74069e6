using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Smoothing;
using FusionService.Scenarios;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests;

/// <summary>
/// Horizontal error of a replay against the truth, at the first state of each whole second the truth covers: RMSE,
/// how many states were counted, and how many had the truth inside their 95 % ellipse.
/// </summary>
internal static class TruthTally
{
    // Upper 5 % point of chi-square with 2 dof, -2 ln 0.05 (NIST/SEMATECH handbook 1.3.6.7.4; derived).
    private const double Inside95 = 5.991464547107979;

    /// <summary>The smoothed track of <paramref name="replay"/>.</summary>
    public static (double RmseM, long Count, long Inside) Smoothed(ScenarioRun run, ReplayResult replay)
    {
        var tally = new Accumulator();
        foreach (SmoothedSegment segment in replay.Smoothed)
        {
            for (int k = 0; k < segment.Count; k++)
            {
                tally.Add(run, segment.TimesUs[k], segment.Planes[k], segment.Means[k], segment.Covariances[k]);
            }
        }

        return tally.Result;
    }

    /// <summary>The filtered track of <paramref name="replay"/>.</summary>
    public static (double RmseM, long Count, long Inside) Filtered(ScenarioRun run, ReplayResult replay)
    {
        var tally = new Accumulator();
        foreach (IReadOnlyList<ForwardStep> segment in replay.Forward)
        {
            foreach (ForwardStep step in segment)
            {
                tally.Add(run, step.TimeUs, step.Plane, step.Filtered, step.FilteredCovariance);
            }
        }

        return tally.Result;
    }

    /// <summary>The filtered track of <paramref name="replay"/> from <paramref name="fromUs"/> to before <paramref name="toUs"/>.</summary>
    public static (long Count, long Inside) FilteredBetween(ScenarioRun run, ReplayResult replay, long fromUs, long toUs)
    {
        var tally = new Accumulator();
        foreach (IReadOnlyList<ForwardStep> segment in replay.Forward)
        {
            foreach (ForwardStep step in segment)
            {
                if (step.TimeUs >= fromUs && step.TimeUs < toUs)
                {
                    tally.Add(run, step.TimeUs, step.Plane, step.Filtered, step.FilteredCovariance);
                }
            }
        }

        return (tally.Result.Count, tally.Result.Inside);
    }

    private sealed class Accumulator
    {
        private double _sumSq;
        private long _count;
        private long _inside;
        private long _lastSecond = long.MinValue;

        public (double RmseM, long Count, long Inside) Result => (Math.Sqrt(_sumSq / Math.Max(1, _count)), _count, _inside);

        public void Add(ScenarioRun run, long timeUs, in LocalTangentPlane plane, in StateVector x, in StateMatrix p)
        {
            long second = timeUs / 1_000_000;
            if (second == _lastSecond || !run.Truth.Covers(timeUs))
            {
                return;
            }

            _lastSecond = second;
            (double de, double dn) = run.Truth.OffsetOf(timeUs, plane, x[EastM], x[NorthM]);
            const int N = StateMatrix.Size;
            double a = p[(EastM * N) + EastM], b = p[(EastM * N) + NorthM], c = p[(NorthM * N) + NorthM];
            double d2 = ((c * de * de) - (2 * b * de * dn) + (a * dn * dn)) / ((a * c) - (b * b));
            _sumSq += (de * de) + (dn * dn);
            _count++;
            _inside += d2 <= Inside95 ? 1 : 0;
        }
    }
}
