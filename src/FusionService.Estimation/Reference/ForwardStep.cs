using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;

namespace FusionService.Estimation.Reference;

/// <summary>
/// One step of the forward (filtering) pass kept for smoothing: the filtered state at <see cref="TimeUs"/> and, except
/// for the first step of a segment, the prediction into it from the previous step.
/// </summary>
public struct ForwardStep
{
    /// <summary>Time, Unix microseconds.</summary>
    public long TimeUs;

    /// <summary>Local plane of the position components.</summary>
    public LocalTangentPlane Plane;

    /// <summary>Filtered mean x(k|k).</summary>
    public StateVector Filtered;

    /// <summary>Filtered covariance P(k|k).</summary>
    public StateMatrix FilteredCovariance;

    /// <summary>Whether the prediction fields are set (false for a segment's first step).</summary>
    public bool HasPrediction;

    /// <summary>Transition Jacobian F from the previous step into this one.</summary>
    public StateMatrix Transition;

    /// <summary>Predicted mean x(k|k-1).</summary>
    public StateVector Predicted;

    /// <summary>Predicted covariance P(k|k-1).</summary>
    public StateMatrix PredictedCovariance;
}
