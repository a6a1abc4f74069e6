namespace FusionService.Estimation.Tracking;

/// <summary>
/// Detects a multipath episode by the step it puts into the GNSS fixes: a reflected signal shifts the position solution
/// by metres to tens of metres from one fix to the next, while the true path — dead-reckoned between fixes by the
/// wheels, gyro and Doppler — and the correlated receiver error (a Gauss-Markov process, which moves by decimetres in a
/// second) do not jump. An abrupt change in the mean of the residuals is the jump hypothesis of the generalized
/// likelihood ratio test (Willsky and Jones 1976, IEEE Trans. Automatic Control 21(1)), here in its simplest form: the
/// mean of the newest one or two residuals against the mean of the two before them, their difference judged against its
/// variance by a chi-square gate with two degrees of freedom.
/// </summary>
/// <remarks>
/// The step is measured on residuals against the track's predicted position with the pulls of earlier fixes' updates
/// added back (<see cref="AddPull"/>: the dead-reckoned track), so a fix the filter has partly followed does not hide
/// it; which side of the step is away from the track is judged against the track at each fix's time. A step away from the track is
/// an episode beginning: its fixes are set aside (not fused; the motion sensors carry the track and its covariance grows
/// honestly) until a step back, or until fixes are again nearer the track plus the GNSS error states' estimate than that
/// plus the episode's bias for <see cref="TrackOptions.MultipathLevelFixes"/> fixes in a row. A step towards the track needs nothing: it is an
/// episode ending that was not seen beginning, which <see cref="TrackProcessor"/> already handles by restarting the GNSS
/// error states. A "step" that lasts is a real change (the track was off): the track's usual rules for fixes rejected for
/// long (recovery, relocation) then apply, since set-aside fixes count as rejected.
/// </remarks>
public struct MultipathStepDetector
{
    private const int Stride = FixResidualRing.Stride;

    /// <summary>The last fixes (see <see cref="FixResidualRing"/>).</summary>
    public FixResidualRing Ring;

    /// <summary>How many fixes <see cref="Ring"/> holds (0 to <see cref="FixResidualRing.Fixes"/>).</summary>
    public int Count;

    /// <summary>Sum of the position shifts GNSS fix updates made since the ring began, east, metres.</summary>
    public double PullEastM;

    /// <summary>Sum of the position shifts GNSS fix updates made since the ring began, north, metres.</summary>
    public double PullNorthM;

    /// <summary>Whether a suspected episode is in progress (fixes set aside).</summary>
    public bool Active;

    /// <summary>When the episode began, Unix microseconds (meaningful while <see cref="Active"/>).</summary>
    public long ActiveSinceUs;

    /// <summary>Residual level before the episode, east, metres.</summary>
    public double ReferenceEastM;

    /// <summary>Residual level before the episode, north, metres.</summary>
    public double ReferenceNorthM;

    /// <summary>Episode's bias relative to <see cref="ReferenceEastM"/>, east, metres.</summary>
    public double BiasEastM;

    /// <summary>Episode's bias relative to <see cref="ReferenceNorthM"/>, north, metres.</summary>
    public double BiasNorthM;

    /// <summary>
    /// Observed over modelled variance of the change between successive fixes outside episodes: an exponentially weighted
    /// mean over about <see cref="WhiteScaleMemory"/> fixes (each term capped at <see cref="WhiteScaleTermCap"/>), 0
    /// before the first. A receiver whose white error is larger than the profile's split says would otherwise make its
    /// own noise look like steps.
    /// </summary>
    public double WhiteScale;

    /// <summary>The position's variance (mean of east and north) after the last fix was processed, m².</summary>
    public double PositionVarianceAfterM2;

    private const double WhiteScaleMemory = 100;
    private const double WhiteScaleTermCap = 10;

    /// <summary>
    /// No episode begins before this time, Unix microseconds: set when an episode's fixes did not hold a steady level (the
    /// track, not the fixes, was moving away: a wrong heading before its stream was isolated), for
    /// <see cref="TrackOptions.MultipathSuppressS"/>.
    /// </summary>
    public long SuppressedUntilUs;

    /// <summary>The GNSS error states' estimate given with the previous fix (before that fix was fused), east, metres.</summary>
    public double PreviousErrorEastM;

    /// <summary>The GNSS error states' estimate given with the previous fix, north, metres.</summary>
    public double PreviousErrorNorthM;

    /// <summary>
    /// The GNSS error states' estimate before the episode's first fix, east, metres: the clean level the episode's fixes are
    /// compared with (the first fix, fused before the step showed, may have pulled the estimate towards the bias).
    /// </summary>
    public double EpisodeErrorEastM;

    /// <summary>The GNSS error states' estimate before the episode's first fix, north, metres.</summary>
    public double EpisodeErrorNorthM;

    /// <summary>Consecutive fixes of the episode nearer the level before it than the episode's own level.</summary>
    public int LevelFixes;

    /// <summary>Forgets the fixes and any episode (after a gap, a reset, a recovery or a carry); keeps <see cref="WhiteScale"/>, which is about the receiver.</summary>
    public void Clear() => this = new MultipathStepDetector { WhiteScale = WhiteScale, SuppressedUntilUs = SuppressedUntilUs };

    /// <summary>
    /// Ends any episode and lets none begin for <see cref="TrackOptions.MultipathSuppressS"/>: the track's own motion is in
    /// doubt (a stream was just isolated, or the episode's fixes ran away from its level), so a step between fixes may be the
    /// track having gone astray rather than the fixes.
    /// </summary>
    public void Suppress(long timeUs, TrackOptions options)
    {
        Active = false;
        SuppressedUntilUs = Math.Max(SuppressedUntilUs, timeUs + (long)(options.MultipathSuppressS * 1e6));
    }

    /// <summary>Records the position's variance (mean of east and north) after a fix was processed, m².</summary>
    public void Settle(double positionVarianceM2) => PositionVarianceAfterM2 = positionVarianceM2;

    /// <summary>Adds the position shift a GNSS fix update just made (see the remarks of the type).</summary>
    public void AddPull(double eastM, double northM)
    {
        PullEastM += eastM;
        PullNorthM += northM;
    }

    /// <summary>
    /// Takes a fix: <paramref name="fixEastM"/>, <paramref name="fixNorthM"/> in the track's plane against the predicted
    /// position <paramref name="trackEastM"/>, <paramref name="trackNorthM"/> and the GNSS error states' estimate
    /// <paramref name="errorEastM"/>, <paramref name="errorNorthM"/>, with the fix's white variance and the GNSS
    /// error's stationary variance and time constant. Returns whether the fix belongs to a suspected episode (set it aside).
    /// </summary>
    public bool Observe(
        long timeUs, double fixEastM, double fixNorthM, double trackEastM, double trackNorthM, double errorEastM, double errorNorthM, double whiteVarianceM2,
        double positionVarianceM2, double correlatedVarianceM2, double timeConstantS, double threshold, TrackOptions options)
    {
        if (Count > 0 && (timeUs - Ring[((Count - 1) * Stride) + 0]) > options.MultipathStepMaxGapS * 1e6)
        {
            Clear();
        }

        double rEast = fixEastM - trackEastM, rNorth = fixNorthM - trackNorthM;
        double previousErrorEastM = PreviousErrorEastM, previousErrorNorthM = PreviousErrorNorthM;
        PreviousErrorEastM = errorEastM;
        PreviousErrorNorthM = errorNorthM;
        // The track's own error grows between fixes by what the motion sensors leave uncertain.
        double growthM2 = Count > 0 ? Math.Max(0, positionVarianceM2 - PositionVarianceAfterM2) : 0;
        double intervalS = Count > 0 ? (timeUs - Ring[((Count - 1) * Stride) + 0]) / 1e6 : 0;
        Push(timeUs, rEast, rNorth, whiteVarianceM2);
        var noise = new StepNoise(correlatedVarianceM2, timeConstantS, intervalS > 0 ? growthM2 / intervalS : 0, Math.Max(1, WhiteScale));
        bool began = false;
        // A step back is taken at its first fix; a step away only at its second: the mean of two fixes halves a single
        // large white error (the one-fix test saw a 4-sigma fix as a step about once in a thousand fixes and set the
        // next few aside), while a reflection, which holds, shows in both.
        WindowMean afterMean = default, beforeMean = default;
        bool stepped = (Active && Step(1, noise, threshold, out afterMean, out beforeMean)) || Step(2, noise, threshold, out afterMean, out beforeMean);
        if (!stepped && !Active && Count >= 2)
        {
            LearnWhiteScale(growthM2);
        }

        if (stepped)
        {
            // The fixes before the step are judged: keep only those after it, so one step is not found twice.
            KeepNewest(afterMean.Count);

            // Away from the level the fixes should show: the level before the episode while one lasts, else the track's
            // position at each fix's time. Not the track plus the GNSS error states' estimate: after an episode they
            // absorbed, the clean fixes would look like the step away.
            bool awayFromTrack = Active
                ? Square(afterMean.EastM - ReferenceEastM) + Square(afterMean.NorthM - ReferenceNorthM)
                    > Square(beforeMean.EastM - ReferenceEastM) + Square(beforeMean.NorthM - ReferenceNorthM)
                : Square(afterMean.ToTrackEastM) + Square(afterMean.ToTrackNorthM)
                    > Square(beforeMean.ToTrackEastM) + Square(beforeMean.ToTrackNorthM);
            if (awayFromTrack && !Active && timeUs >= SuppressedUntilUs)
            {
                Active = true;
                began = true;
                ActiveSinceUs = timeUs;
                ReferenceEastM = beforeMean.EastM;
                ReferenceNorthM = beforeMean.NorthM;
                EpisodeErrorEastM = afterMean.Count == 2 ? previousErrorEastM : errorEastM;
                EpisodeErrorNorthM = afterMean.Count == 2 ? previousErrorNorthM : errorNorthM;
                LevelFixes = 0;
            }
            else if (!awayFromTrack && Active)
            {
                Active = false;
                return false;
            }
            else if (Active && beforeMean.FirstTimeUs >= ActiveSinceUs)
            {
                // A second step further away, from fixes of the episode: not one reflection holding its bias but fixes
                // running away (the track drifting, or a reflection that keeps changing), which setting fixes aside would
                // only let run on. (From fixes before the episode it is the same step seen whole, when its first fix
                // began the episode with half of it.)
                Suppress(timeUs, options);
                return false;
            }

            if (Active)
            {
                BiasEastM = afterMean.EastM - ReferenceEastM;
                BiasNorthM = afterMean.NorthM - ReferenceNorthM;
            }
        }

        if (Active && !began)
        {
            // A reflection holds its bias: fixes of an episode stay at its level, within their white noise, the Gauss-Markov
            // change and the track's growth since it began. Fixes running away from it show the track drifting (a wrong
            // heading not yet isolated), which setting fixes aside would only let run on.
            double sinceS = (timeUs - ActiveSinceUs) / 1e6;
            double dEast = rEast + PullEastM - ReferenceEastM - BiasEastM, dNorth = rNorth + PullNorthM - ReferenceNorthM - BiasNorthM;
            double levelVariance = (noise.WhiteScale * 2 * whiteVarianceM2) + (2 * correlatedVarianceM2 * (1 - Math.Exp(-sinceS / timeConstantS)))
                + (noise.GrowthM2PerS * sinceS);
            if ((Square(dEast) + Square(dNorth)) / levelVariance >= threshold)
            {
                Suppress(timeUs, options);
                return false;
            }

            // Clean or biased? Against the track plus the GNSS error states' estimate before the episode (which its fixes
            // do not reach: they are not fused), decayed as the Gauss-Markov error decays, rather than against the two
            // fixes before the step, one of which may have been a large white error that made the step.
            double decay = Math.Exp(-sinceS / timeConstantS);
            double cleanEast = EpisodeErrorEastM * decay, cleanNorth = EpisodeErrorNorthM * decay;
            double toClean = Square(rEast - cleanEast) + Square(rNorth - cleanNorth);
            double toEpisode = Square(rEast - cleanEast - BiasEastM) + Square(rNorth - cleanNorth - BiasNorthM);
            LevelFixes = toClean < toEpisode ? LevelFixes + 1 : 0;
            if (LevelFixes >= options.MultipathLevelFixes)
            {
                Active = false;
            }
        }

        return Active;
    }

    /// <summary>What the difference of the means may hold besides a step: the Gauss-Markov error's change, the track's growth per second, the white variances' scale.</summary>
    private readonly record struct StepNoise(double CorrelatedVarianceM2, double TimeConstantS, double GrowthM2PerS, double WhiteScale);

    /// <summary>
    /// Updates <see cref="WhiteScale"/> with the newest two fixes' change: its squared length over twice (two axes) its
    /// modelled variance (both white variances and the track's growth; the Gauss-Markov change over a second is a few per
    /// cent of that and left out, which errs towards a larger scale).
    /// </summary>
    private void LearnWhiteScale(double growthM2)
    {
        int a = (Count - 2) * Stride, b = (Count - 1) * Stride;
        double dEast = Ring[b + 1] + Ring[b + 4] - Ring[a + 1] - Ring[a + 4];
        double dNorth = Ring[b + 2] + Ring[b + 5] - Ring[a + 2] - Ring[a + 5];
        double modelled = Ring[a + 3] + Ring[b + 3] + growthM2;
        double term = Math.Min(WhiteScaleTermCap, (Square(dEast) + Square(dNorth)) / (2 * modelled));
        WhiteScale = WhiteScale == 0 ? term : WhiteScale + ((term - WhiteScale) / WhiteScaleMemory);
    }

    /// <summary>
    /// Mean of <see cref="Count"/> consecutive residuals of the ring: time (Unix microseconds), position against the
    /// dead-reckoned track and against the track at each fix's time (metres), the variance of the mean's white part (m²),
    /// and the time of the window's first fix.
    /// </summary>
    private readonly record struct WindowMean(
        double TimeUs, double EastM, double NorthM, double ToTrackEastM, double ToTrackNorthM, double WhiteVarianceM2, int Count, double FirstTimeUs);

    private readonly WindowMean MeanOf(int first, int count)
    {
        double time = 0, east = 0, north = 0, toTrackEast = 0, toTrackNorth = 0, variance = 0;
        for (int i = first; i < first + count; i++)
        {
            int at = i * Stride;
            time += Ring[at];
            toTrackEast += Ring[at + 1];
            toTrackNorth += Ring[at + 2];
            variance += Ring[at + 3];
            east += Ring[at + 1] + Ring[at + 4];
            north += Ring[at + 2] + Ring[at + 5];
        }

        return new WindowMean(time / count, east / count, north / count, toTrackEast / count, toTrackNorth / count, variance / (count * count), count, Ring[first * Stride]);
    }

    /// <summary>
    /// Whether the mean of the newest <paramref name="after"/> residuals differs from the mean of the (up to) two before them by
    /// more than <paramref name="threshold"/> (NIS of the difference, two dimensions). The difference's variance per axis:
    /// the white variances of both means, plus the Gauss-Markov error's change between the means' times,
    /// 2 σ² (1 - exp(-Δt/τ)) (its stationary increment; Brown and Hwang 2012, first-order Gauss-Markov autocorrelation).
    /// </summary>
    private readonly bool Step(int after, StepNoise noise, double threshold, out WindowMean afterMean, out WindowMean beforeMean)
    {
        int before = Math.Min(2, Count - after);
        afterMean = beforeMean = default;
        if (before < 1)
        {
            return false;
        }

        afterMean = MeanOf(Count - after, after);
        beforeMean = MeanOf(Count - after - before, before);
        double lagS = (afterMean.TimeUs - beforeMean.TimeUs) / 1e6;
        double variance = (noise.WhiteScale * (afterMean.WhiteVarianceM2 + beforeMean.WhiteVarianceM2))
            + (2 * noise.CorrelatedVarianceM2 * (1 - Math.Exp(-lagS / noise.TimeConstantS))) + (noise.GrowthM2PerS * lagS);
        double nis = (Square(afterMean.EastM - beforeMean.EastM) + Square(afterMean.NorthM - beforeMean.NorthM)) / variance;
        return nis >= threshold;
    }

    private void KeepNewest(int keep)
    {
        int drop = Count - keep;
        for (int i = 0; i < keep * Stride; i++)
        {
            Ring[i] = Ring[i + (drop * Stride)];
        }

        Count = keep;
    }

    private void Push(long timeUs, double eastM, double northM, double whiteVarianceM2)
    {
        if (Count == FixResidualRing.Fixes)
        {
            for (int i = 0; i < (FixResidualRing.Fixes - 1) * Stride; i++)
            {
                Ring[i] = Ring[i + Stride];
            }

            Count--;
        }

        int at = Count * Stride;
        Ring[at] = timeUs;
        Ring[at + 1] = eastM;
        Ring[at + 2] = northM;
        Ring[at + 3] = whiteVarianceM2;
        Ring[at + 4] = PullEastM;
        Ring[at + 5] = PullNorthM;
        Count++;
    }

    private static double Square(double x) => x * x;
}
