using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Tracking;

namespace FusionService.Estimation.Reference;

/// <summary>Keeps every forward step, split into segments at each (re)start of the filter, for <see cref="RauchTungStriebelSmoother"/>.</summary>
public sealed class ForwardPassRecorder : IStepRecorder
{
    private readonly List<List<ForwardStep>> _segments = [];
    private ForwardStep _pending;

    /// <summary>The recorded segments; a track reset, a carry, an isolated stream or a GNSS error restart starts a new one.</summary>
    public IReadOnlyList<IReadOnlyList<ForwardStep>> Segments => _segments;

    /// <inheritdoc />
    public void Start(long timeUs, in StateVector x, in StateMatrix p, in LocalTangentPlane plane)
    {
        _segments.Add([new ForwardStep { TimeUs = timeUs, Plane = plane, Filtered = x, FilteredCovariance = p }]);
    }

    /// <inheritdoc />
    public void Predicted(in StateMatrix f, in StateVector xPredicted, in StateMatrix pPredicted)
    {
        _pending = new ForwardStep
        {
            HasPrediction = true,
            Transition = f,
            Predicted = xPredicted,
            PredictedCovariance = pPredicted,
        };
    }

    /// <inheritdoc />
    public void Posterior(long timeUs, in StateVector x, in StateMatrix p, in LocalTangentPlane plane)
    {
        ForwardStep step = _pending;
        step.TimeUs = timeUs;
        step.Plane = plane;
        step.Filtered = x;
        step.FilteredCovariance = p;
        _segments[^1].Add(step);
        _pending = default;
    }
}
