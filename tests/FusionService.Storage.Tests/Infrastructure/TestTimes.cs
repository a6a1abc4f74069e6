// Fixed instants used by the storage tests (never today's date).

using FusionService.Estimation.Time;
namespace FusionService.Storage.Tests.Infrastructure;

/// <summary>Fixed days and instants; no assertion depends on the clock.</summary>
public static class TestTimes
{
    /// <summary>2025-03-08, an arbitrary fixed UTC day.</summary>
    public static readonly DateOnly Day = new(2025, 3, 8);

    /// <summary>Unix microseconds of <see cref="Day"/> 00:00:00Z.</summary>
    public static readonly long DayStartUs = UnixMicroseconds.StartOfUtcDay(Day);

    /// <summary>Unix microseconds of <paramref name="day"/> at <paramref name="hour"/>:<paramref name="minute"/>:<paramref name="second"/>
    /// plus <paramref name="microsecond"/> microseconds, UTC.</summary>
    public static long At(DateOnly day, int hour, int minute, int second, int microsecond) =>
        UnixMicroseconds.StartOfUtcDay(day) + ((((hour * 60L) + minute) * 60L) + second) * 1_000_000L + microsecond;
}
