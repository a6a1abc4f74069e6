namespace FusionService.Estimation.Tracking;

/// <summary>
/// A time the track took the vehicle to be carried (towed, on a ferry, lifted; see <see cref="CarriedMotion"/>), from the
/// first GNSS speed that showed it to the measurement that ended it, Unix microseconds, end exclusive.
/// </summary>
/// <param name="StartUs">Start of the carry.</param>
/// <param name="EndUs">End of the carry (the last state's time when the replay ended while carried).</param>
public readonly record struct CarriedInterval(long StartUs, long EndUs)
{
    /// <summary>Whether <paramref name="timeUs"/> lies in [<see cref="StartUs"/>, <see cref="EndUs"/>).</summary>
    public bool Contains(long timeUs) => timeUs >= StartUs && timeUs < EndUs;

    /// <summary>
    /// Appends <paramref name="next"/> to <paramref name="intervals"/> (in time order), merging it with the last one when
    /// they touch: a carry that spans two stretches replayed side by side is one carry.
    /// </summary>
    public static void Append(List<CarriedInterval> intervals, CarriedInterval next)
    {
        ArgumentNullException.ThrowIfNull(intervals);
        if (intervals.Count > 0 && intervals[^1].EndUs >= next.StartUs)
        {
            intervals[^1] = intervals[^1] with { EndUs = Math.Max(intervals[^1].EndUs, next.EndUs) };
            return;
        }

        intervals.Add(next);
    }
}
