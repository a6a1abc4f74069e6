// Conversions between Unix microseconds (the store's time key) and UTC DateTime / calendar days.
namespace FusionService.Storage.Time;

/// <summary>
/// Conversions for the store's time key: Unix time in microseconds since 1970-01-01T00:00:00Z, leap seconds
/// not counted (POSIX time). PostgreSQL's <c>timestamptz</c> has the same microsecond resolution.
/// </summary>
public static class UnixMicroseconds
{
    private const long TicksPerMicrosecond = TimeSpan.TicksPerMillisecond / 1000;

    /// <summary>The instant <paramref name="timeUs"/> as a <see cref="DateTime"/> with Kind=Utc.</summary>
    /// <param name="timeUs">Unix microseconds; must lie within years 1-9999.</param>
    /// <exception cref="ArgumentOutOfRangeException">Outside the range of <see cref="DateTime"/>.</exception>
    public static DateTime ToDateTimeUtc(long timeUs)
    {
        var minUs = (DateTime.MinValue.Ticks - DateTime.UnixEpoch.Ticks) / TicksPerMicrosecond;
        var maxUs = (DateTime.MaxValue.Ticks - DateTime.UnixEpoch.Ticks) / TicksPerMicrosecond;
        ArgumentOutOfRangeException.ThrowIfLessThan(timeUs, minUs);
        ArgumentOutOfRangeException.ThrowIfGreaterThan(timeUs, maxUs);
        return new DateTime(DateTime.UnixEpoch.Ticks + (timeUs * TicksPerMicrosecond), DateTimeKind.Utc);
    }

    /// <summary>Unix microseconds of <paramref name="utc"/>, rounded down to a whole microsecond.</summary>
    /// <param name="utc">An instant with Kind=Utc.</param>
    /// <exception cref="ArgumentException">Kind is not Utc.</exception>
    public static long FromDateTime(DateTime utc)
    {
        if (utc.Kind != DateTimeKind.Utc)
        {
            throw new ArgumentException("DateTime must have Kind=Utc, got " + utc.Kind + ".", nameof(utc));
        }

        var quotient = Math.DivRem(utc.Ticks - DateTime.UnixEpoch.Ticks, TicksPerMicrosecond, out var remainder);
        return remainder < 0 ? quotient - 1 : quotient;
    }

    /// <summary>The UTC calendar day containing <paramref name="timeUs"/>.</summary>
    /// <param name="timeUs">Unix microseconds.</param>
    public static DateOnly UtcDayOf(long timeUs) => DateOnly.FromDateTime(ToDateTimeUtc(timeUs));

    /// <summary>Unix microseconds of midnight UTC at the start of <paramref name="day"/>.</summary>
    /// <param name="day">A calendar day, read as a UTC day.</param>
    public static long StartOfUtcDay(DateOnly day) =>
        FromDateTime(day.ToDateTime(TimeOnly.MinValue, DateTimeKind.Utc));
}
