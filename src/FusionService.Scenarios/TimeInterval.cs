// A half-open span of Unix time.
namespace FusionService.Scenarios;

/// <summary>A half-open time span [<see cref="StartTimeUs"/>, <see cref="EndTimeUs"/>) in Unix microseconds.</summary>
/// <param name="StartTimeUs">First instant inside the span, microseconds since the Unix epoch (UTC).</param>
/// <param name="EndTimeUs">First instant after the span, microseconds since the Unix epoch; not before the start.</param>
public readonly record struct TimeInterval(long StartTimeUs, long EndTimeUs)
{
    /// <summary>Length of the span, microseconds.</summary>
    public long DurationUs => EndTimeUs - StartTimeUs;

    /// <summary>True when <paramref name="timeUs"/> lies in [start, end).</summary>
    /// <param name="timeUs">Time, Unix microseconds.</param>
    public bool Contains(long timeUs) => timeUs >= StartTimeUs && timeUs < EndTimeUs;

    /// <summary>A span of <paramref name="durationS"/> seconds starting at <paramref name="startTimeUs"/>.</summary>
    /// <param name="startTimeUs">Start, Unix microseconds.</param>
    /// <param name="durationS">Length, seconds, finite and non-negative (rounded to the microsecond).</param>
    public static TimeInterval FromDuration(long startTimeUs, double durationS)
    {
        if (!double.IsFinite(durationS) || durationS < 0)
        {
            throw new ArgumentOutOfRangeException(nameof(durationS), durationS, "duration must be finite and non-negative");
        }

        return new TimeInterval(startTimeUs, startTimeUs + (long)Math.Round(durationS * 1e6));
    }
}
