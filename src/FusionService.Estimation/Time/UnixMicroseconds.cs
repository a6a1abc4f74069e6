// Conversions between Unix microseconds (the time of the core and the store) and UTC DateTime / calendar days.
namespace FusionService.Estimation.Time;

/// <summary>
/// The one set of conversions for the time used from ingest to storage to replay (the core's <c>TimeUs</c>, the store's
/// time key): Unix time in microseconds since 1970-01-01T00:00:00Z, leap seconds not counted (POSIX time).
/// PostgreSQL's <c>timestamptz</c> has the same microsecond resolution.
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

    /// <summary>The instant <paramref name="timeUs"/> as a <see cref="DateTimeOffset"/> with offset zero.</summary>
    /// <param name="timeUs">Unix microseconds; must lie within years 1-9999.</param>
    /// <exception cref="ArgumentOutOfRangeException">Outside the range of <see cref="DateTimeOffset"/>.</exception>
    public static DateTimeOffset ToDateTimeOffset(long timeUs) => new(ToDateTimeUtc(timeUs));

    /// <summary>Unix microseconds of <paramref name="instant"/> (any offset), rounded down to a whole microsecond.</summary>
    /// <param name="instant">An instant.</param>
    public static long FromDateTimeOffset(DateTimeOffset instant) => FromDateTime(instant.UtcDateTime);

    /// <summary>Unix microseconds of the current instant of <paramref name="time"/>, rounded down to a whole microsecond.</summary>
    /// <param name="time">The clock.</param>
    public static long Now(TimeProvider time)
    {
        ArgumentNullException.ThrowIfNull(time);
        return FromDateTimeOffset(time.GetUtcNow());
    }

    /// <summary>The UTC calendar day containing <paramref name="timeUs"/>.</summary>
    /// <param name="timeUs">Unix microseconds.</param>
    public static DateOnly UtcDayOf(long timeUs) => DateOnly.FromDateTime(ToDateTimeUtc(timeUs));

    /// <summary>Unix microseconds of midnight UTC at the start of <paramref name="day"/>.</summary>
    /// <param name="day">A calendar day, read as a UTC day.</param>
    public static long StartOfUtcDay(DateOnly day) =>
        FromDateTime(day.ToDateTime(TimeOnly.MinValue, DateTimeKind.Utc));
}
