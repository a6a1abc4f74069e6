// Unix microsecond conversions.
using FusionService.Estimation.Time;

namespace FusionService.Estimation.Tests.Time;

public sealed class UnixMicrosecondsTests
{
    [Fact]
    public void One_billion_seconds_is_2001_09_09T01_46_40Z()
    {
        // POSIX "seconds since the epoch" (IEEE Std 1003.1, Base Definitions 4.16; derived):
        // 10^9 s = 11574 days + 6400 s, and day 11574 after 1970-01-01 is 2001-09-09.
        var instant = UnixMicroseconds.ToDateTimeUtc(1_000_000_000_000_000L);

        Assert.Equal(new DateTime(2001, 9, 9, 1, 46, 40, DateTimeKind.Utc), instant);
        Assert.Equal(DateTimeKind.Utc, instant.Kind);
        Assert.Equal(1_000_000_000_000_000L, UnixMicroseconds.FromDateTime(instant));
    }

    [Fact]
    public void Sub_microsecond_ticks_round_down_also_before_1970()
    {
        // One 100 ns tick after and before the epoch (DateTime ticks are 100 ns; derived).
        Assert.Equal(0L, UnixMicroseconds.FromDateTime(DateTime.UnixEpoch.AddTicks(9)));
        Assert.Equal(-1L, UnixMicroseconds.FromDateTime(DateTime.UnixEpoch.AddTicks(-1)));
        Assert.Equal(-1L, UnixMicroseconds.FromDateTime(DateTime.UnixEpoch.AddTicks(-10)));
        Assert.Equal(-2L, UnixMicroseconds.FromDateTime(DateTime.UnixEpoch.AddTicks(-11)));
    }

    [Fact]
    public void Non_utc_times_are_refused()
    {
        Assert.Throws<ArgumentException>(() => UnixMicroseconds.FromDateTime(new DateTime(2025, 1, 1, 0, 0, 0, DateTimeKind.Unspecified)));
        Assert.Throws<ArgumentException>(() => UnixMicroseconds.FromDateTime(new DateTime(2025, 1, 1, 0, 0, 0, DateTimeKind.Local)));
    }

    [Fact]
    public void Utc_day_and_its_start_agree()
    {
        var day = new DateOnly(2025, 3, 8);
        var start = UnixMicroseconds.StartOfUtcDay(day);

        Assert.Equal(day, UnixMicroseconds.UtcDayOf(start));
        Assert.Equal(day.AddDays(-1), UnixMicroseconds.UtcDayOf(start - 1));
        Assert.Equal(86_400_000_000L, UnixMicroseconds.StartOfUtcDay(day.AddDays(1)) - start);
    }
}
