using System.Runtime.InteropServices;
using FusionService.Estimation.Filtering;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Tracking;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Smoothing;

/// <summary>
/// A bounded-memory <see cref="IStepRecorder"/> for Rauch-Tung-Striebel smoothing: instead of every forward step
/// (about 1.7 KB each, <see cref="Reference.ForwardPassRecorder"/>), it keeps only chosen instants (the first posterior at least
/// <see cref="RecordIntervalUs"/> after the previous recorded one, the last one before a gap in the data, and each
/// segment's first and last) and folds every
/// step between two recorded instants into one equivalent smoothing step, while the forward pass runs.
/// </summary>
/// <remarks>
/// <para>
/// The smoother of Rauch, Tung and Striebel (1965), "Maximum likelihood estimates of linear dynamic systems",
/// AIAA J. 3(8): C(j) = P(j|j) F(j+1)ᵀ P(j+1|j)⁻¹, x(j|N) = x(j|j) + C(j) [x(j+1|N) - x(j+1|j)],
/// P(j|N) = P(j|j) + C(j) [P(j+1|N) - P(j+1|j)] C(j)ᵀ. Unrolled from a recorded instant r = j0 over the forward steps
/// j1 ... jm (jm the next recorded instant), with A(i) = C(j0) ... C(ji):
/// x(r|N) = x(r|r) + Σ_{i&lt;m-1} A(i) [x(j(i+1)|j(i+1)) - x(j(i+1)|ji)] + A(m-1) [x(jm|N) - x(jm|j(m-1))],
/// P(r|N) = P(r|r) + Σ_{i&lt;m-1} A(i) [P(j(i+1)|j(i+1)) - P(j(i+1)|ji)] A(i)ᵀ + A(m-1) [P(jm|N) - P(jm|j(m-1))] A(m-1)ᵀ.
/// Everything but the last term is known in the forward pass, and A grows by right multiplication, so it is summed
/// forward: with Σ = A(i-1) P(ji|ji) (the cross-covariance of x(r) and x(ji) given the data so far) and
/// Σ⁻ = Σ F(j(i+1))ᵀ, G = Σ⁻ P(j(i+1)|ji)⁻¹ = A(i); then μ ← μ + G [x⁺ - x⁻], Π ← Π + G [P⁺ - P⁻] Gᵀ = Π + (G P⁺ - Σ⁻) Gᵀ,
/// Σ ← G P⁺. One link per pair of recorded instants remains: x(r|N) = μ + G [x(k|N) - x(k|·)] and
/// P(r|N) = D + G P(k|N) Gᵀ with D = Π - Σ⁻ Gᵀ; and the smoothed lag cross-covariance is Cov(x(r), x(k) | N) = G P(k|N)
/// (the chained form of Cov(x(j), x(j+1) | N) = C(j) P(j+1|N)), so <see cref="Diagnostics.DistanceIntegrator"/>
/// works on the result with G in place of C.
/// </para>
/// <para>
/// The compaction is an exact rearrangement of the full-step smoother's sums and products (equal up to round-off,
/// which the tests check on scenario data). Like <see cref="Reference.RauchTungStriebelSmoother"/> it is the extended (linearised)
/// smoother: the forward pass's transition Jacobians F stand in for the transition matrix and its covariances for the
/// true conditional ones, so it is exact for the linearised model, not for the non-linear CTRA motion. Steps without
/// elapsed time and without re-anchoring (F = I, prediction equal to the previous posterior, C = I) are merged with
/// their neighbours. Between recorded instants the fold needs no inverse: the filter hands over each update's factors
/// (<see cref="UpdateFactors"/>, the fixed-point smoother's form of the same sums), so the n x n Cholesky solve for G is
/// made once per recorded instant, and per step only where the posterior was changed by more than updates
/// (<see cref="IStepRecorder.Adjusted"/>). Heading differences are wrapped to (-π, π].
/// </para>
/// </remarks>
public sealed class CompactingStepRecorder : IStepRecorder
{
    private const int N = StateMatrix.Size;

    private readonly List<CompactedSegment> _segments = [];
    private readonly SegmentArrayPool? _pool;
    private int _expectedInstants;
    private CompactedSegment? _segment;

    // The recorded instant r that the steps after it are folded into, the latest posterior (not yet recorded or folded),
    // the pending prediction/posterior pair before it, the step being predicted, and where the recorder is in that step.
    private Link _link;
    private LatestPosterior _latest;
    private Pair _pair;
    private Prediction _next;
    private StepPhase _phase;

    // P(k|k-1) of the pending pair and of the step being predicted, in two slots swapped instead of copied.
    private CovariancePair _predicted;
    private int _pairSlot;

    /// <summary>Creates a recorder.</summary>
    /// <param name="recordIntervalUs">Least spacing of recorded instants, microseconds, non-negative (0 records every distinct instant).</param>
    /// <param name="discardBeforeUs">Recorded instants followed by another one at or before this time (Unix microseconds)
    /// are dropped as the forward pass goes, so a long run-in before the wanted window costs no memory; the last instant at
    /// or before it is kept. Default: keep everything.</param>
    /// <param name="expectedInstants">Room made in the first segment up front (it grows by doubling beyond it), so that a
    /// long window is not copied over and over while it fills; 0 lets it start small.</param>
    /// <param name="pool">Where the segments' arrays come from (see <see cref="SegmentArrayPool"/>); null: new arrays.</param>
    public CompactingStepRecorder(long recordIntervalUs, long discardBeforeUs = long.MinValue, int expectedInstants = 0, SegmentArrayPool? pool = null)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(recordIntervalUs);
        ArgumentOutOfRangeException.ThrowIfNegative(expectedInstants);
        RecordIntervalUs = recordIntervalUs;
        DiscardBeforeUs = discardBeforeUs;
        _expectedInstants = expectedInstants;
        _pool = pool;
        _pair.Updates = [];
        _next.Updates = [];
    }

    /// <summary>
    /// A posterior followed by a step longer than this (a gap in the data) is always recorded, microseconds: 2 s, the
    /// <see cref="Diagnostics.TrapezoidDistanceIntegrator.GapS"/> beyond which distance is taken along the chord.
    /// </summary>
    public const long GapUs = 2_000_000;

    /// <summary>Recorded instants superseded by a later one at or before this time are dropped, Unix microseconds.</summary>
    public long DiscardBeforeUs { get; }

    /// <summary>Least spacing of recorded instants, microseconds.</summary>
    public long RecordIntervalUs { get; }

    /// <summary>The segments; call <see cref="Complete"/> first so that the last one is closed.</summary>
    public IReadOnlyList<CompactedSegment> Segments => _segments;

    /// <inheritdoc />
    public void Start(long timeUs, in StateVector x, in StateMatrix p, in LocalTangentPlane plane)
    {
        Complete();
        _segment = new CompactedSegment(_expectedInstants, _pool);
        _expectedInstants = 0;
        _segments.Add(_segment);
        _link.Index = _segment.Add(timeUs, plane);
        _link.TimeUs = timeUs;
        _link.Mu = x;
        _link.Pi = p;
        _link.Sigma = p;
        _latest.X = x;
        _latest.P = p;
        _latest.TimeUs = timeUs;
        _latest.Plane = plane;
        _pair.IsOpen = false;
        _phase = StepPhase.AwaitingPrediction;
        ClearUpdates();
    }

    /// <inheritdoc />
    public void Predicted(in StateMatrix f, in StateVector xPredicted, in StateMatrix pPredicted)
    {
        if (_segment is null)
        {
            throw new InvalidOperationException("Predicted before Start");
        }

        if (_pair.IsOpen && MatrixKernels.SameBits(f, StateIdentity.Value) && MatrixKernels.SameBits(xPredicted, _latest.X) && MatrixKernels.SameBits(pPredicted, _latest.P))
        {
            // The updates that follow belong to the pending pair, whose posterior they replace.
            _phase = StepPhase.PredictedNoChange;
            return;
        }

        _next.Updates.Clear();
        _next.Adjusted = false;
        _next.Transition = f;
        _next.X = xPredicted;
        _predicted[1 - _pairSlot] = pPredicted;
        _phase = StepPhase.Predicted;
    }

    /// <inheritdoc />
    public void Posterior(long timeUs, in StateVector x, in StateMatrix p, in LocalTangentPlane plane)
    {
        if (_segment is null)
        {
            throw new InvalidOperationException("Posterior before Start");
        }

        if (_phase == StepPhase.PredictedNoChange)
        {
            _phase = StepPhase.AwaitingPrediction;
        }
        else
        {
            if (_phase != StepPhase.Predicted)
            {
                throw new InvalidOperationException("Posterior without a prediction");
            }

            if (_pair.IsOpen)
            {
                // Also keep the last posterior before a gap in the data, so that no link spans driving and the gap.
                if (_latest.TimeUs - _link.TimeUs >= RecordIntervalUs || timeUs - _latest.TimeUs > GapUs)
                {
                    RecordPair();
                }
                else
                {
                    AbsorbPair();
                }
            }

            MatrixKernels.MultiplyByTransposedTransition(_link.Sigma, _next.Transition, ref _pair.SigmaPredicted);
            _pair.XPredicted = _next.X;
            _pairSlot = 1 - _pairSlot;
            _pair.IsOpen = true;
            _phase = StepPhase.AwaitingPrediction;
            (_pair.Updates, _next.Updates) = (_next.Updates, _pair.Updates);
            _pair.Adjusted = _next.Adjusted;
            _next.Updates.Clear();
            _next.Adjusted = false;
        }

        _latest.X = x;
        _latest.P = p;
        _latest.TimeUs = timeUs;
        _latest.Plane = plane;
    }

    /// <inheritdoc />
    public void Updated(in UpdateFactors factors)
    {
        (_phase == StepPhase.PredictedNoChange ? _pair.Updates : _next.Updates).Add(factors);
    }

    /// <inheritdoc />
    public void Adjusted()
    {
        if (_phase == StepPhase.PredictedNoChange)
        {
            _pair.Adjusted = true;
        }
        else
        {
            _next.Adjusted = true;
        }
    }

    /// <summary>Closes the current segment (records its last posterior); further steps need a new <see cref="Start"/>.</summary>
    public void Complete()
    {
        if (_segment is null)
        {
            return;
        }

        if (_pair.IsOpen)
        {
            RecordPair();
        }

        _segment.Means[_link.Index] = _link.Mu;
        _segment.Covariances[_link.Index] = _link.Pi;
        _segment.Gains[_link.Index] = default;
        _segment = null;
        _pair.IsOpen = false;
        _phase = StepPhase.AwaitingPrediction;
        ClearUpdates();
    }

    private void ClearUpdates()
    {
        _pair.Updates.Clear();
        _pair.Adjusted = false;
        _next.Updates.Clear();
        _next.Adjusted = false;
    }

    /// <summary>Closes the link from the current recorded instant to the pending posterior, which becomes the new one.</summary>
    private void RecordPair()
    {
        CompactedSegment s = _segment!;
        if (_latest.TimeUs <= DiscardBeforeUs)
        {
            // The current instant is superseded before the wanted window: the pending posterior replaces it.
            s.Replace(_link.Index, _latest.TimeUs, _latest.Plane);
            _link.TimeUs = _latest.TimeUs;
            _link.Mu = _latest.X;
            _link.Pi = _latest.P;
            _link.Sigma = _latest.P;
            _pair.IsOpen = false;
            return;
        }

        StateMatrix gT = default;
        SolveGainTransposed(_pair.SigmaPredicted, _predicted[_pairSlot], ref gT);

        // D = Π - Σ⁻ Gᵀ.
        StateMatrix product = default;
        MatrixKernels.Multiply(_pair.SigmaPredicted, gT, product);
        StateMatrix d = _link.Pi;
        for (int i = 0; i < StateMatrix.Length; i++)
        {
            d[i] -= product[i];
        }

        StateMatrix g = default;
        MatrixKernels.Transpose(gT, ref g);
        s.Means[_link.Index] = _link.Mu;
        s.Covariances[_link.Index] = d;
        s.Gains[_link.Index] = g;
        s.PredictedNext[_link.Index] = _pair.XPredicted;
        _link.Index = s.Add(_latest.TimeUs, _latest.Plane);
        _link.TimeUs = _latest.TimeUs;
        _link.Mu = _latest.X;
        _link.Pi = _latest.P;
        _link.Sigma = _latest.P;
        _pair.IsOpen = false;
    }

    /// <summary>
    /// Folds the pending prediction/posterior pair into μ, Π and Σ of the current recorded instant: by its measurement
    /// updates' factors when the posterior is the prediction followed by those updates alone, otherwise through the
    /// predicted covariance's inverse (<see cref="AbsorbPairThroughInverse"/>).
    /// </summary>
    /// <remarks>
    /// With G = Σ⁻ P⁻⁻¹ and one update of factors w, W, B (<see cref="UpdateFactors"/>): G (x⁺ - x⁻) = G K ν = Σ⁻ Hᵀ S⁻¹ ν
    /// = A w with A = Σ⁻ W; G (P⁺ - P⁻) Gᵀ = -G K H P⁻ Gᵀ = -A Aᵀ; G P⁺ = Σ⁻ - A Bᵀ. Several updates at one instant chain,
    /// each with the Σ the previous one left; a gated measurement (no update) leaves μ, Π and Σ = Σ⁻ as they are. This is
    /// the same fold in exact arithmetic (the Joseph form's P⁺ equals (I - K H) P⁻ for the optimal gain) without a
    /// Cholesky factorisation per step; the tests hold both forms to the full-step smoother.
    /// </remarks>
    private void AbsorbPair()
    {
        if (_pair.Adjusted)
        {
            AbsorbPairThroughInverse();
            return;
        }

        // Σ is folded in the pair's Σ⁻ itself (not needed after this fold), which saves a copy of it.
        Span<double> sigmaS = _pair.SigmaPredicted;
        ref double sigmaR = ref MemoryMarshal.GetReference(sigmaS);
        Span<double> pi = _link.Pi;
        Span<double> a = stackalloc double[N * ExtendedKalmanFilter.MaxMeasurementDimension];
        Span<StateRow> columns = stackalloc StateRow[ExtendedKalmanFilter.MaxMeasurementDimension];
        foreach (ref readonly UpdateFactors update in CollectionsMarshal.AsSpan(_pair.Updates))
        {
            int m = update.Dimension;
            ReadOnlySpan<double> information = update.Information;
            ReadOnlySpan<double> gain = update.Gain;
            ReadOnlySpan<double> whitened = update.Whitened;

            // A = Σ W, row by row: A(i, c) = Σ(i, ·) · W(·, c).
            for (int c = 0; c < m; c++)
            {
                columns[c] = StateRow.Gather(information, c, m);
            }

            for (int i = 0; i < N; i++)
            {
                var row = StateRow.Load(ref sigmaR, i * N);
                for (int c = 0; c < m; c++)
                {
                    a[(i * m) + c] = StateRow.Dot(row, columns[c]);
                }
            }

            // μ += A w, Π -= A Aᵀ, Σ -= A Bᵀ.
            for (int i = 0; i < N; i++)
            {
                double shift = 0;
                for (int c = 0; c < m; c++)
                {
                    shift += a[(i * m) + c] * whitened[c];
                }

                _link.Mu[i] += shift;
            }

            OuterProductUpdate.Subtract(pi, a, a, m);
            OuterProductUpdate.Subtract(sigmaS, a, gain, m);
        }

        _link.Sigma = _pair.SigmaPredicted;
        _pair.IsOpen = false;
    }

    /// <summary>
    /// Folds the pending pair through G = Σ⁻ P⁻⁻¹ from its prediction and posterior alone, for a posterior that is not the
    /// prediction followed by measurement updates (see <see cref="IStepRecorder.Adjusted"/>).
    /// </summary>
    private void AbsorbPairThroughInverse()
    {
        StateMatrix gT = default;
        SolveGainTransposed(_pair.SigmaPredicted, _predicted[_pairSlot], ref gT);
        ReadOnlySpan<double> gTs = gT;
        ref double gTr = ref MemoryMarshal.GetReference(gTs);

        // μ ← μ + G [x⁺ - x⁻], G's columns taken as rows of Gᵀ.
        var shift = StateRow.Zero;
        for (int j = 0; j < N; j++)
        {
            double dxj = _latest.X[j] - _pair.XPredicted[j];
            if (j == HeadingRad)
            {
                dxj = Angles.WrapPi(dxj);
            }

            shift += StateRow.Load(ref gTr, j * N) * StateRow.Broadcast(dxj);
        }

        Span<double> mu = _link.Mu;
        ref double muR = ref MemoryMarshal.GetReference(mu);
        (StateRow.Load(ref muR, 0) + shift).Store(ref muR, 0);

        // Σ ← G P⁺, skipping zero gains.
        StateMatrix g = default;
        MatrixKernels.Transpose(gT, ref g);
        StateMatrix sigma = MatrixKernels.MultiplySkippingZeros(g, _latest.P);

        // Π ← Π + (Σ - Σ⁻) Gᵀ.
        StateMatrix diff = default;
        for (int i = 0; i < StateMatrix.Length; i++)
        {
            diff[i] = sigma[i] - _pair.SigmaPredicted[i];
        }

        StateMatrix product = default;
        MatrixKernels.Multiply(diff, gT, product);
        for (int i = 0; i < StateMatrix.Length; i++)
        {
            _link.Pi[i] += product[i];
        }

        _link.Sigma = sigma;
        _pair.IsOpen = false;
    }

    /// <summary>Gᵀ = P⁻¹ Σ⁻ᵀ (G = Σ⁻ P⁻¹, P symmetric positive definite) by one Cholesky factorisation.</summary>
    private static void SolveGainTransposed(in StateMatrix sigmaPred, in StateMatrix pPred, ref StateMatrix gT)
    {
        Span<double> chol = stackalloc double[StateMatrix.Length];
        ((ReadOnlySpan<double>)pPred).CopyTo(chol);
        if (!Cholesky.FactorInPlace(chol, N))
        {
            throw new FilterDivergenceException("predicted covariance is not positive definite while compacting the forward pass");
        }

        MatrixKernels.Transpose(sigmaPred, ref gT);
        Cholesky.SolveInPlace(chol, ref gT);
    }

    /// <summary>Two covariances inline.</summary>
    [System.Runtime.CompilerServices.InlineArray(2)]
    private struct CovariancePair
    {
        private StateMatrix _element0;
    }

    /// <summary>Where the recorder is between a <see cref="Predicted"/> and its <see cref="Posterior"/>.</summary>
    private enum StepPhase
    {
        /// <summary>No prediction since the last posterior (or since <see cref="Start"/>).</summary>
        AwaitingPrediction,

        /// <summary>A prediction was heard; its updates and posterior make the next pair.</summary>
        Predicted,

        /// <summary>
        /// A prediction over no time that changed nothing (F = I, same mean and covariance): the updates and posterior that
        /// follow belong to the pending pair, whose posterior they replace.
        /// </summary>
        PredictedNoChange,
    }

    /// <summary>The current recorded instant and what the steps after it have been folded into so far.</summary>
    private struct Link
    {
        /// <summary>Index r of the recorded instant in the segment.</summary>
        public int Index;

        /// <summary>Its time, Unix microseconds.</summary>
        public long TimeUs;

        /// <summary>μ, the mean of x(r) given the data so far with the folded steps' smoothing terms.</summary>
        public StateVector Mu;

        /// <summary>Π, the covariance that goes with μ.</summary>
        public StateMatrix Pi;

        /// <summary>Σ, the cross-covariance of x(r) and the latest posterior given the data so far.</summary>
        public StateMatrix Sigma;
    }

    /// <summary>The latest posterior.</summary>
    private struct LatestPosterior
    {
        public StateVector X;
        public StateMatrix P;
        public long TimeUs;
        public LocalTangentPlane Plane;
    }

    /// <summary>The pending prediction/posterior pair, to be recorded or folded when the next posterior comes.</summary>
    private struct Pair
    {
        /// <summary>Whether there is a pending pair.</summary>
        public bool IsOpen;

        /// <summary>Σ⁻ = Σ Fᵀ, the cross-covariance of x(r) and the pair's prediction.</summary>
        public StateMatrix SigmaPredicted;

        /// <summary>x⁻, the pair's predicted mean.</summary>
        public StateVector XPredicted;

        /// <summary>The pair's measurement updates.</summary>
        public List<UpdateFactors> Updates;

        /// <summary>Whether anything other than an update changed the pair's posterior (then it is folded through the inverse).</summary>
        public bool Adjusted;
    }

    /// <summary>The step being predicted: its transition, predicted mean, updates and whether anything else adjusted it.</summary>
    private struct Prediction
    {
        public StateMatrix Transition;
        public StateVector X;
        public List<UpdateFactors> Updates;
        public bool Adjusted;
    }
}
