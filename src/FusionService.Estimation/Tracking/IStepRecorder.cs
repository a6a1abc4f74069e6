using FusionService.Estimation.Filtering;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;

namespace FusionService.Estimation.Tracking;

/// <summary>
/// Receives every forward step of the filter, for Rauch-Tung-Striebel smoothing. Calls come in order:
/// <see cref="Start"/> when the filter (re)starts or re-initialises its motion (a carried vehicle recognised; then it
/// may follow a <see cref="Predicted"/> without its <see cref="Posterior"/>), then for each later measurement <see cref="Predicted"/>, one
/// <see cref="Updated"/> per applied update and <see cref="Adjusted"/> if anything else changed the state, then
/// <see cref="Posterior"/> (not called when the measurement reset the track: a new <see cref="Start"/> follows).
/// </summary>
public interface IStepRecorder
{
    /// <summary>The filter started (or restarted after a reset) with this state; a new smoothing segment begins.</summary>
    void Start(long timeUs, in StateVector x, in StateMatrix p, in LocalTangentPlane plane);

    /// <summary>Prediction to the next measurement: transition Jacobian F (including any re-anchoring), predicted mean and covariance.</summary>
    void Predicted(in StateMatrix f, in StateVector xPredicted, in StateMatrix pPredicted);

    /// <summary>State after the measurement at <paramref name="timeUs"/> (equal to the prediction if it was gated).</summary>
    void Posterior(long timeUs, in StateVector x, in StateMatrix p, in LocalTangentPlane plane);

    /// <summary>
    /// A measurement update between <see cref="Predicted"/> and <see cref="Posterior"/> was applied, with these factors
    /// (one call per update, in order). A recorder that only needs the prediction and the posterior ignores it.
    /// </summary>
    void Updated(in UpdateFactors factors)
    {
    }

    /// <summary>
    /// Between <see cref="Predicted"/> and <see cref="Posterior"/> the state or covariance was changed by something
    /// other than a measurement update (covariance inflation after repeated rejections, a heading re-acquired from two
    /// fixes), so the posterior is not the prediction followed by the <see cref="Updated"/> calls alone.
    /// </summary>
    void Adjusted()
    {
    }
}
