using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;

namespace FusionService.Estimation.Diagnostics;

/// <summary>
/// Per-sensor innovation statistics: counts of accepted and gated measurements and the mean NIS of the last
/// <see cref="WindowSize"/> accepted ones with its chi-square interval and verdict (<see cref="NisConsistencyTest"/>).
/// Gated measurements are counted but left out of the mean, which is the statistic of what the filter used.
/// </summary>
public sealed class InnovationStatistics
{
    private const int KindCount = 4;
    private readonly long[] _count = new long[KindCount];
    private readonly long[] _gated = new long[KindCount];
    private readonly double[][] _nis;
    private readonly byte[][] _dof;
    private readonly int[] _next = new int[KindCount];
    private readonly int[] _filled = new int[KindCount];

    /// <summary>Creates statistics with a sliding window of <paramref name="windowSize"/> accepted measurements per sensor.</summary>
    public InnovationStatistics(int windowSize = 200)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(windowSize, 1);
        WindowSize = windowSize;
        _nis = Enumerable.Range(0, KindCount).Select(_ => new double[windowSize]).ToArray();
        _dof = Enumerable.Range(0, KindCount).Select(_ => new byte[windowSize]).ToArray();
    }

    /// <summary>Accepted measurements per sensor the mean NIS is taken over.</summary>
    public int WindowSize { get; }

    /// <summary>Adds one outcome; outcomes without an innovation are ignored.</summary>
    public void Add(SensorKind sensor, in MeasurementOutcome outcome)
    {
        int k = (int)sensor;
        if (outcome.Dimension == 0 || double.IsNaN(outcome.Nis))
        {
            return;
        }

        _count[k]++;
        if (outcome.Kind != OutcomeKind.Accepted)
        {
            _gated[k]++;
            return;
        }

        _nis[k][_next[k]] = outcome.Nis;
        _dof[k][_next[k]] = (byte)outcome.Dimension;
        _next[k] = (_next[k] + 1) % WindowSize;
        _filled[k] = Math.Min(_filled[k] + 1, WindowSize);
    }

    /// <summary>Summary for one sensor.</summary>
    public InnovationSummary Summarize(SensorKind sensor)
    {
        int k = (int)sensor, filled = _filled[k];
        if (filled == 0)
        {
            return new InnovationSummary(sensor, _count[k], _gated[k], double.NaN, 0, 0, double.NaN, double.NaN, ConsistencyVerdict.Insufficient);
        }

        double sum = 0;
        int dof = 0;
        for (int i = 0; i < filled; i++)
        {
            sum += _nis[k][i];
            dof += _dof[k][i];
        }

        double mean = sum / filled;
        (double lower, double upper) = NisConsistencyTest.Interval(filled, dof);
        var verdict = NisConsistencyTest.Judge(mean, filled, dof);
        return new InnovationSummary(sensor, _count[k], _gated[k], mean, filled, dof, lower, upper, verdict);
    }
}
