namespace FusionService.Estimation.Diagnostics;

/// <summary>
/// Finds GNSS outages: gaps between consecutive position fixes longer than a threshold during which the vehicle moved.
/// "Moved" means that some motion sample (a fused speed estimate) with a time inside the closed gap reached the moving
/// speed; a gap with no motion sample at all is not reported, because nothing shows that the vehicle was driving.
/// Only gaps bounded by two fixes count: silence before the first or after the last fix of the input is not a gap.
/// </summary>
public static class GnssOutageDetector
{
    /// <summary>Default shortest reported gap, seconds: 5 (five missed epochs of a 1 Hz receiver).</summary>
    public const double DefaultMinGapS = 5.0;

    /// <summary>Default speed above which the vehicle counts as moving, m/s: 1.0 (3.6 km/h, walking pace).</summary>
    public const double DefaultMovingSpeedMps = 1.0;

    /// <summary>The outages, in time order.</summary>
    /// <param name="fixTimesUs">Times of the position fixes, Unix microseconds, ascending (duplicates allowed).</param>
    /// <param name="motionTimesUs">Times of the motion samples, Unix microseconds, ascending.</param>
    /// <param name="speedsMps">Speed of each motion sample, m/s (its magnitude is used; NaN never counts as moving).</param>
    /// <param name="minGapS">Gaps strictly longer than this are candidates, seconds, positive.</param>
    /// <param name="movingSpeedMps">Speed at or above which a sample shows motion, m/s, non-negative.</param>
    public static IReadOnlyList<GnssOutage> Find(
        ReadOnlySpan<long> fixTimesUs, ReadOnlySpan<long> motionTimesUs, ReadOnlySpan<double> speedsMps, double minGapS, double movingSpeedMps)
    {
        if (motionTimesUs.Length != speedsMps.Length)
        {
            throw new ArgumentException("every motion sample needs one speed", nameof(speedsMps));
        }

        if (!(minGapS > 0) || !double.IsFinite(minGapS))
        {
            throw new ArgumentOutOfRangeException(nameof(minGapS), minGapS, "must be finite and positive");
        }

        if (!(movingSpeedMps >= 0) || !double.IsFinite(movingSpeedMps))
        {
            throw new ArgumentOutOfRangeException(nameof(movingSpeedMps), movingSpeedMps, "must be finite and non-negative");
        }

        var outages = new List<GnssOutage>();
        long minGapUs = (long)Math.Round(minGapS * 1e6);
        int motion = 0;
        for (int i = 1; i < fixTimesUs.Length; i++)
        {
            long from = fixTimesUs[i - 1], to = fixTimesUs[i];
            if (to < from)
            {
                throw new ArgumentException("fix times must be ascending", nameof(fixTimesUs));
            }

            if (to - from <= minGapUs)
            {
                continue;
            }

            while (motion < motionTimesUs.Length && motionTimesUs[motion] < from)
            {
                motion++;
            }

            bool moved = false;
            for (int k = motion; k < motionTimesUs.Length && motionTimesUs[k] <= to; k++)
            {
                if (Math.Abs(speedsMps[k]) >= movingSpeedMps)
                {
                    moved = true;
                    break;
                }
            }

            if (moved)
            {
                outages.Add(new GnssOutage(from, to));
            }
        }

        return outages;
    }
}
