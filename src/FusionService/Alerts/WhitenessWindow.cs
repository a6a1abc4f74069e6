// One sensor's whitened innovations over the current window of the inconsistent_sensor rule.
using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Tracking;

namespace FusionService.Alerts;

/// <summary>
/// The whiteness half of <c>inconsistent_sensor</c> for one sensor: the whitened innovation components of the window's
/// fused measurements, tested by <see cref="InnovationWhitenessTest"/> when the window closes (each component at level
/// 0.05 divided by the number of components, Bonferroni), and the run of consecutive windows found correlated.
/// Fixed memory: two <see cref="AutocorrelationAccumulator"/>s, reused from window to window.
/// </summary>
internal sealed class WhitenessWindow(int lags)
{
    private const double Significance = 0.05;
    private readonly AutocorrelationAccumulator[] _components = [new(lags), new(lags)];

    /// <summary>Consecutive closed windows whose innovations were correlated.</summary>
    public int ConsecutiveCorrelated { get; private set; }

    /// <summary>The component result with the largest Q over its critical value in the last closed window, or null.</summary>
    public WhitenessResult? Last { get; private set; }

    /// <summary>Number of lags h.</summary>
    public int Lags => _components[0].MaxLag;

    /// <summary>Adds the whitened components of one fused measurement.</summary>
    public void Add(in MeasurementOutcome outcome)
    {
        _components[0].Add(outcome.Whitened0);
        _components[1].Add(outcome.Whitened1);
    }

    /// <summary>Tests the window, updates the run of correlated windows and starts a new window.</summary>
    public void Close(int minimumSamples)
    {
        int used = (_components[0].Count > 0 ? 1 : 0) + (_components[1].Count > 0 ? 1 : 0);
        WhitenessResult? worst = null;
        bool correlated = false;
        foreach (var component in _components)
        {
            if (component.Count == 0)
            {
                continue;
            }

            var result = InnovationWhitenessTest.Test(component, Significance / used, minimumSamples);
            correlated |= result.Verdict == WhitenessVerdict.Correlated;
            if (worst is null || Ratio(result) > Ratio(worst))
            {
                worst = result;
            }

            component.Reset();
        }

        Last = worst;
        ConsecutiveCorrelated = correlated ? ConsecutiveCorrelated + 1 : 0;
    }

    private static double Ratio(WhitenessResult r) => double.IsFinite(r.LjungBoxQ) ? r.LjungBoxQ / r.CriticalValue : -1;
}
