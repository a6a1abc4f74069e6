namespace FusionService.Estimation.Models;

/// <summary>
/// Per-receiver estimate of the GNSS error's correlated share f and time constant τ (see <see cref="GnssErrorModel"/>),
/// fitted by the method of moments to the empirical variogram of the fixes a standing vehicle reports, at a short lag
/// (successive fixes, about 1 s) and at a long one (<see cref="LongLagS"/>). A value type without references: it lives
/// in the track state and is updated without allocating.
/// </summary>
/// <remarks>
/// <para>
/// While the vehicle stands (wheels at zero, the standstill constraint on) the fixes differ only by their error, so the
/// differences of two fixes k seconds apart estimate the error's variogram (structure function) without knowing the
/// position or removing a mean: 2γ(k) = E[(y(t + k) - y(t))²] (Matheron, "Principles of geostatistics", Economic
/// Geology 58, 1963; Cressie, <i>Statistics for Spatial Data</i>, rev. ed. 1993, ch. 2; from memory). For white noise
/// of variance (1 - f) σ² plus a first-order Gauss-Markov process of variance f σ² and time constant τ (autocorrelation
/// f σ² exp(-|k|/τ); Brown and Hwang 2012) the variogram is the exponential model with a nugget:
/// γ(k) / σ² = 1 - f exp(-k/τ) for k &gt; 0 (derived). Each squared difference is divided by the mean reported variance
/// of its two fixes, σ² being the receiver's reported accuracy (the filter's own assumption: the reported accuracy
/// describes the total error), so fixes of changing accuracy pool. With u(k) = 1 - γ(k)/σ² = f exp(-k/τ) at two lags
/// k₁ &lt; k₂: τ = (k₂ - k₁) / ln(u(k₁) / u(k₂)) and f = u(k₁) exp(k₁/τ) (derived).
/// </para>
/// <para>
/// Both moments start from pseudo-observations (<see cref="PriorShortPairs"/>, <see cref="PriorLongPairs"/>) of the
/// profile's own (f, τ), or of the pair the track was started from (<see cref="StartingFrom"/>), so a track without stops keeps the defaults and a few stops move them only part of
/// the way. A fit from a few stops scatters widely (τ from 38 to 152 s, 10th to 90th percentile, over 64 half-hour
/// drives of a receiver with τ = 60 s), and a τ fitted too short makes the filter over-confident while one too long
/// only makes it cautious; so the fit is cautious: the long-lag moment is lowered by <see cref="CautionStandardErrors"/>
/// of its standard error before solving (0.25, chosen on `./build.sh bench consistency` when the prior weighed 4 long-lag
/// terms: 0 left the smoothed ellipse at 94.1 % on the clean-sky drives, 0.5 raised it to 97.1 % and the τ = 20 s
/// receivers to 97.7 %). The estimates are
/// held inside <see cref="MinTimeConstantS"/>-<see cref="MaxTimeConstantS"/> and
/// <see cref="MinShare"/>-<see cref="MaxShare"/> (widened to include the profile's values). The sums are scaled down
/// once they hold more than <see cref="MaxLongPairs"/> long-lag samples, so a receiver whose error changes (a day in
/// town after a morning in the open) is followed. Only accepted fixes count, and a gated fix breaks both chains:
/// a multipath episode large enough to be gated is not taken as the receiver's ordinary error. Nor is a smaller one: a pair whose
/// difference fails the 99.9 % chi-square gate of what the current fit expects at its lag is left out, and when two
/// successive fixes fail it (a step: an episode beginning or ending) both chains start again, so that long-lag pairs
/// lie wholly inside an episode, whose steady bias cancels in the difference, or wholly outside one.
/// </para>
/// <para>
/// Innovation-based adaptive estimation (Mehra, "On the identification of variances and adaptive Kalman filtering",
/// IEEE TAC 15(2), 1970; Mohamed and Schwarz, "Adaptive Kalman filtering for INS/GPS", J. Geodesy 73, 1999) was the
/// alternative: it matches the innovations' covariance, but a mismatched time constant changes the 1 Hz innovations by
/// centimetres against metres of white noise, while the fixes of a standing vehicle show it directly.
/// </para>
/// </remarks>
public struct GnssErrorVariogram
{
    /// <summary>Longest spacing of two successive fixes taken as a short-lag pair, seconds.</summary>
    public const double MaxShortLagS = 1.5;

    /// <summary>Spacing of the long-lag pairs, seconds (at least; the next fix after it closes the pair).</summary>
    public const double LongLagS = 30.0;

    /// <summary>
    /// Pseudo-observations of the profile's values at the short lag (terms, both axes): as many as the standing time that
    /// gives <see cref="PriorLongPairs"/> long-lag terms gives at 1 Hz, <see cref="PriorLongPairs"/> × <see cref="LongLagS"/> / 1 s
    /// (derived: a standstill of D seconds closes about D short-lag pairs and D / <see cref="LongLagS"/> long-lag ones).
    /// The prior is then a fictitious earlier standstill of a receiver with the profile's (f, τ), of the same design as the
    /// data, the usual reading of a conjugate prior as a prior sample (Raiffa and Schlaifer, <i>Applied Statistical
    /// Decision Theory</i>, 1961; Gelman et al., <i>Bayesian Data Analysis</i>, 3rd ed. 2013, the prior sample size;
    /// from memory). With 40 here the short lag was the receiver's own after one stop while the long lag kept the
    /// profile's for hours, and the fit solved the data's nugget against the profile's long-lag level: median τ over 64
    /// drives of a half-white τ = 20 s receiver 32 s after three earlier rounds (26 s with this prior), of a 95 %
    /// correlated τ = 120 s one 74 s on its first round (94 s); the nugget now stays nearer the profile's for a round or
    /// so (share 0.62 instead of 0.51 on the first round of the half-white receiver). `./build.sh bench consistency 64
    /// "clean tau 20 s" learned` and `"clean tau" fitted`, 5 December 2026, 11:47-12:14 UTC, load average 15-32.
    /// </summary>
    public const double PriorShortPairs = PriorLongPairs * LongLagS / NominalFixIntervalS;

    /// <summary>The fix interval the short-lag prior is counted in, seconds (1 Hz, the delivery van's receiver).</summary>
    public const double NominalFixIntervalS = 1.0;

    /// <summary>
    /// Pseudo-observations of the profile's values at the long lag (terms, both axes), about what an hour of delivery stops
    /// gives: a half-hour round (24-60 terms) moves the fit about half way, and a track, which keeps its fit from round to
    /// round, is its receiver's after a few. With 4, a fit from one round's few stops scattered (τ 10-300 s at the 10th
    /// and 90th percentile over 64 rounds) and a τ fitted at 41 s set off 50 s of gated clean fixes after a multipath
    /// episode in one of four test drives (`MultipathEpisodeTests`); with 40 those drives gate as with the fixed model.
    /// </summary>
    public const double PriorLongPairs = 40.0;

    /// <summary>Long-lag samples (per axis, pooled) beyond which both sums are scaled down (exponential forgetting).</summary>
    public const double MaxLongPairs = 400.0;

    /// <summary>
    /// Standard errors by which the long-lag moment is lowered before the fit, lengthening τ (see the type's remarks).
    /// </summary>
    public const double CautionStandardErrors = 0.25;

    /// <summary>Lower bound of the estimated time constant, seconds.</summary>
    public const double MinTimeConstantS = 10.0;

    /// <summary>Upper bound of the estimated time constant, seconds.</summary>
    public const double MaxTimeConstantS = 300.0;

    /// <summary>Lower bound of the estimated correlated share.</summary>
    public const double MinShare = 0.3;

    /// <summary>Upper bound of the estimated correlated share.</summary>
    public const double MaxShare = 0.97;

    private const double MicrosecondsPerSecond = 1e6;

    /// <summary>Whether a previous fix of the current standstill is held.</summary>
    public bool HasPrevious;

    /// <summary>Time of the previous fix of the current standstill, Unix microseconds.</summary>
    public long PreviousUs;

    /// <summary>East of the previous fix, metres in the track's plane.</summary>
    public double PreviousEastM;

    /// <summary>North of the previous fix, metres in the track's plane.</summary>
    public double PreviousNorthM;

    /// <summary>Reported per-axis variance of the previous fix, square metres.</summary>
    public double PreviousVarianceM2;

    /// <summary>Whether a long-lag pair is open.</summary>
    public bool HasAnchor;

    /// <summary>Time of the open long-lag pair's first fix, Unix microseconds.</summary>
    public long AnchorUs;

    /// <summary>East of the open long-lag pair's first fix, metres.</summary>
    public double AnchorEastM;

    /// <summary>North of the open long-lag pair's first fix, metres.</summary>
    public double AnchorNorthM;

    /// <summary>Reported per-axis variance of the open long-lag pair's first fix, square metres.</summary>
    public double AnchorVarianceM2;

    /// <summary>Sum of normalised squared short-lag differences, one term per axis.</summary>
    public double ShortSum;

    /// <summary>Number of terms in <see cref="ShortSum"/>.</summary>
    public double ShortCount;

    /// <summary>Sum of the short lags, seconds, one term per axis.</summary>
    public double ShortLagSumS;

    /// <summary>Sum of normalised squared long-lag differences, one term per axis.</summary>
    public double LongSum;

    /// <summary>Number of terms in <see cref="LongSum"/>.</summary>
    public double LongCount;

    /// <summary>Sum of the long lags, seconds, one term per axis.</summary>
    public double LongLagSumS;

    /// <summary>Estimated correlated share f, or 0 before the first long-lag pair.</summary>
    public double Share;

    /// <summary>Estimated time constant τ, seconds, or 0 before the first long-lag pair.</summary>
    public double TimeConstantS;

    /// <summary>Whether an estimate has been made (<see cref="Share"/> and <see cref="TimeConstantS"/> are set).</summary>
    public readonly bool HasEstimate => TimeConstantS > 0;

    /// <summary>
    /// The correlated share this track's fit starts from when it was given one (<see cref="StartingFrom"/>: what the
    /// other receivers of its fleet fitted), or 0: the profile's.
    /// </summary>
    public double StartShare;

    /// <summary>The time constant this track's fit starts from, seconds, or 0: the profile's (see <see cref="StartShare"/>).</summary>
    public double StartTimeConstantS;

    /// <summary>Whether the track was given its own starting pair rather than the profile's.</summary>
    public readonly bool HasStart => StartTimeConstantS > 0;

    /// <summary>
    /// A fit that has seen nothing yet and starts from (<paramref name="share"/>, <paramref name="timeConstantS"/>)
    /// instead of the profile's pair: the pair is the prior of the moments (the same pseudo-observations, see the type's
    /// remarks) and the model the track uses until its first fit.
    /// </summary>
    public static GnssErrorVariogram StartingFrom(double share, double timeConstantS)
    {
        if (!(share > 0 && share < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(share), share, "a correlated share lies in (0, 1)");
        }

        if (!(timeConstantS > 0) || !double.IsFinite(timeConstantS))
        {
            throw new ArgumentOutOfRangeException(nameof(timeConstantS), timeConstantS, "a time constant is a positive number of seconds");
        }

        return new GnssErrorVariogram { StartShare = share, StartTimeConstantS = timeConstantS };
    }

    /// <summary>The prior pair: the track's starting pair if it was given one, else the profile's.</summary>
    /// <param name="profileShare">The profile's correlated share.</param>
    /// <param name="profileTimeConstantS">The profile's time constant, seconds.</param>
    public readonly (double Share, double TimeConstantS) Prior(double profileShare, double profileTimeConstantS) =>
        HasStart ? (StartShare, StartTimeConstantS) : (profileShare, profileTimeConstantS);

    /// <summary>Ends both chains of pairs (the vehicle moved, a fix was gated, the plane changed).</summary>
    public void Break()
    {
        HasPrevious = false;
        HasAnchor = false;
    }

    /// <summary>
    /// Takes an accepted fix of a standing vehicle: closes a short-lag pair with the previous fix when they are at most
    /// <see cref="MaxShortLagS"/> apart, closes the open long-lag pair once <see cref="LongLagS"/> has passed, and then
    /// refits (f, τ). Returns whether the estimate changed.
    /// </summary>
    /// <param name="timeUs">Time of the fix, Unix microseconds.</param>
    /// <param name="eastM">East of the fix in the track's plane, metres.</param>
    /// <param name="northM">North of the fix in the track's plane, metres.</param>
    /// <param name="varianceM2">The fix's reported per-axis variance, square metres.</param>
    /// <param name="priorShare">The prior's correlated share (<see cref="Prior"/>).</param>
    /// <param name="priorTimeConstantS">The prior's time constant, seconds.</param>
    public bool Observe(long timeUs, double eastM, double northM, double varianceM2, double priorShare, double priorTimeConstantS)
    {
        if (!(varianceM2 > 0) || !double.IsFinite(varianceM2))
        {
            Break();
            return false;
        }

        if (HasPrevious)
        {
            double lagS = (timeUs - PreviousUs) / MicrosecondsPerSecond;
            double squares = NormalisedSquares(eastM - PreviousEastM, northM - PreviousNorthM, PreviousVarianceM2, varianceM2);
            if (lagS > 0 && lagS <= MaxShortLagS)
            {
                if (Plausible(squares, lagS, priorShare, priorTimeConstantS))
                {
                    ShortSum += squares;
                    ShortCount += 2;
                    ShortLagSumS += 2 * lagS;
                }
                else
                {
                    // A step between successive fixes (a multipath episode beginning or ending): no pair may span it.
                    Break();
                }
            }
        }

        HasPrevious = true;
        PreviousUs = timeUs;
        PreviousEastM = eastM;
        PreviousNorthM = northM;
        PreviousVarianceM2 = varianceM2;
        if (!HasAnchor)
        {
            SetAnchor(timeUs, eastM, northM, varianceM2);
            return false;
        }

        double longLagS = (timeUs - AnchorUs) / MicrosecondsPerSecond;
        if (longLagS < LongLagS)
        {
            return false;
        }

        double longSquares = NormalisedSquares(eastM - AnchorEastM, northM - AnchorNorthM, AnchorVarianceM2, varianceM2);
        SetAnchor(timeUs, eastM, northM, varianceM2);
        if (!Plausible(longSquares, longLagS, priorShare, priorTimeConstantS))
        {
            return false;
        }

        LongSum += longSquares;
        LongCount += 2;
        LongLagSumS += 2 * longLagS;
        if (LongCount > MaxLongPairs)
        {
            double keep = MaxLongPairs / LongCount;
            LongSum *= keep;
            LongCount *= keep;
            LongLagSumS *= keep;
            ShortSum *= keep;
            ShortCount *= keep;
            ShortLagSumS *= keep;
        }

        (Share, TimeConstantS) = Fit(priorShare, priorTimeConstantS);
        return true;
    }

    /// <summary>
    /// The method-of-moments fit of the exponential variogram with a nugget to the two pooled lags (prior included),
    /// bounded as the type describes.
    /// </summary>
    public readonly (double Share, double TimeConstantS) Fit(double priorShare, double priorTimeConstantS)
    {
        double priorShortLagS = NominalFixIntervalS;
        double shortCount = ShortCount + PriorShortPairs, longCount = LongCount + PriorLongPairs;
        double shortLagS = (ShortLagSumS + (PriorShortPairs * priorShortLagS)) / shortCount;
        double longLagS = (LongLagSumS + (PriorLongPairs * LongLagS)) / longCount;
        double shortMean = (ShortSum + (PriorShortPairs * ExpectedNormalisedSquare(priorShare, priorTimeConstantS, priorShortLagS))) / shortCount;
        double longMean = (LongSum + (PriorLongPairs * ExpectedNormalisedSquare(priorShare, priorTimeConstantS, LongLagS))) / longCount;
        // Cautious: the long-lag moment lowered by CautionStandardErrors of its standard error, v √(2/n) for n terms
        // that are each a squared normal of variance v (chi-square with one degree of freedom; derived), which lengthens τ.
        longMean *= 1.0 - (CautionStandardErrors * Math.Sqrt(2.0 / longCount));
        return FitTwoLags(shortLagS, shortMean, longLagS, longMean, priorShare, priorTimeConstantS);
    }

    /// <summary>
    /// Expected normalised squared difference of one axis at lag k under the model, 2 γ(k)/σ² = 2 (1 - f exp(-k/τ)) (derived).
    /// </summary>
    public static double ExpectedNormalisedSquare(double share, double timeConstantS, double lagS) =>
        2.0 * (1.0 - (share * Math.Exp(-lagS / timeConstantS)));

    /// <summary>
    /// Solves 2 (1 - f exp(-k/τ)) = m at two lags for (f, τ), bounded (see the type's remarks); the bounds are widened to
    /// include the prior's values.
    /// </summary>
    /// <param name="shortLagS">Short lag k₁, seconds.</param>
    /// <param name="shortMean">Mean normalised squared difference at k₁.</param>
    /// <param name="longLagS">Long lag k₂ &gt; k₁, seconds.</param>
    /// <param name="longMean">Mean normalised squared difference at k₂.</param>
    /// <param name="priorShare">The profile's share (widens the bounds).</param>
    /// <param name="priorTimeConstantS">The profile's time constant, seconds (widens the bounds).</param>
    public static (double Share, double TimeConstantS) FitTwoLags(
        double shortLagS, double shortMean, double longLagS, double longMean, double priorShare, double priorTimeConstantS)
    {
        double minTau = Math.Min(MinTimeConstantS, priorTimeConstantS), maxTau = Math.Max(MaxTimeConstantS, priorTimeConstantS);
        double minShare = Math.Min(MinShare, priorShare), maxShare = Math.Max(MaxShare, priorShare);
        double uShort = 1.0 - (0.5 * shortMean), uLong = 1.0 - (0.5 * longMean);
        double tau;
        if (!(uLong > 0))
        {
            tau = minTau;
        }
        else if (!(uShort > uLong))
        {
            tau = maxTau;
        }
        else
        {
            tau = Math.Clamp((longLagS - shortLagS) / Math.Log(uShort / uLong), minTau, maxTau);
        }

        double share = Math.Clamp(uShort * Math.Exp(shortLagS / tau), minShare, maxShare);
        return (share, tau);
    }

    /// <summary>
    /// Whether a pair's two-axis normalised squared difference passes the 99.9 % chi-square gate (2 degrees of freedom,
    /// -2 ln 0.001 = 13.8155; derived) of the difference the current fit expects at that lag: a multipath episode that
    /// begins or ends between the two fixes is a step of the error, not its ordinary wander, and is left out.
    /// </summary>
    private readonly bool Plausible(double squares, double lagS, double priorShare, double priorTimeConstantS)
    {
        double share = HasEstimate ? Share : priorShare, tauS = HasEstimate ? TimeConstantS : priorTimeConstantS;
        return squares <= PairGate * ExpectedNormalisedSquare(share, tauS, lagS);
    }

    /// <summary>Upper 0.1 % point of chi-square with 2 degrees of freedom, -2 ln 0.001 (derived).</summary>
    private const double PairGate = 13.815510557964274;

    private void SetAnchor(long timeUs, double eastM, double northM, double varianceM2)
    {
        HasAnchor = true;
        AnchorUs = timeUs;
        AnchorEastM = eastM;
        AnchorNorthM = northM;
        AnchorVarianceM2 = varianceM2;
    }

    private static double NormalisedSquares(double de, double dn, double varianceA, double varianceB) =>
        ((de * de) + (dn * dn)) / (0.5 * (varianceA + varianceB));
}
