using System.Text.Json;
using FusionService.Simulator.Messages;

namespace FusionService.Simulator.Tests.Messages;

/// <summary>The ingest JSON form: exact member names, RFC 3339 times, shortest numbers, round trips.</summary>
public sealed class TelemetryJsonTests
{
    // 2026-12-02T08:00:00Z = 20 789 days after 1970-01-01 plus 8 h: 1 796 198 400 s (derived from the POSIX definition of
    // Unix time, IEEE Std 1003.1 "Seconds Since the Epoch"; 20 789 = 56 years x 365 + 14 leap days + 334 days to 2 December).
    private const long EightAmUs = 1_796_198_400_000_000;

    [Fact]
    public void Gnss_message_has_exactly_the_api_member_names()
    {
        var m = new TelemetryMessage("van-01", "gnss", EightAmUs + 100_000, "van-01/gnss/0")
        {
            LatDeg = 46.12,
            LonDeg = 8.47,
            AccuracyM = 3.0,
            AccuracyKind = "one_sigma",
            SpeedMps = 9.5,
            CourseDeg = 90.0,
            SpeedAccuracyMps = 0.1,
        };
        Assert.Equal(
            """{"vehicle":"van-01","kind":"gnss","time":"2026-12-02T08:00:00.100000Z","id":"van-01/gnss/0","lat_deg":46.12,"lon_deg":8.47,"accuracy_m":3,"accuracy_kind":"one_sigma","speed_mps":9.5,"course_deg":90,"speed_accuracy_mps":0.1}""",
            TelemetryJson.Serialize(m));
    }

    [Fact]
    public void Wheel_and_imu_messages_have_exactly_the_api_member_names()
    {
        var wheel = new TelemetryMessage("van-02", "wheel", EightAmUs, "w1") { SpeedMps = 12.25 };
        var imu = new TelemetryMessage("van-02", "imu", EightAmUs + 1, "i1") { YawRateDps = -0.5, AccelMps2 = 0.75 };
        var imuNoAccel = new TelemetryMessage("van-02", "imu", EightAmUs + 999_999, "i2") { YawRateDps = 1e-7 };
        Assert.Equal("""{"vehicle":"van-02","kind":"wheel","time":"2026-12-02T08:00:00.000000Z","id":"w1","speed_mps":12.25}""", TelemetryJson.Serialize(wheel));
        Assert.Equal("""{"vehicle":"van-02","kind":"imu","time":"2026-12-02T08:00:00.000001Z","id":"i1","yaw_rate_dps":-0.5,"accel_mps2":0.75}""", TelemetryJson.Serialize(imu));
        Assert.Equal("""{"vehicle":"van-02","kind":"imu","time":"2026-12-02T08:00:00.999999Z","id":"i2","yaw_rate_dps":1E-07}""", TelemetryJson.Serialize(imuNoAccel));
    }

    [Theory]
    [InlineData(0L, "1970-01-01T00:00:00.000000Z")] // the Unix epoch itself (POSIX, published)
    [InlineData(EightAmUs + 123_456, "2026-12-02T08:00:00.123456Z")] // derived above
    [InlineData(951_782_400_000_000L, "2000-02-29T00:00:00.000000Z")] // 11 016 days (30 x 365 + 7 leap days + 59 days), derived as above
    public void Times_are_rfc3339_utc_with_microseconds(long timeUs, string expected)
    {
        Assert.Equal(expected, TelemetryJson.FormatTime(timeUs));
        Assert.Equal(timeUs, TelemetryJson.ParseTime(expected));
    }

    [Fact]
    public void Offsets_are_converted_to_utc_and_sub_microsecond_times_are_refused()
    {
        Assert.Equal(EightAmUs, TelemetryJson.ParseTime("2026-12-02T09:00:00.000000+01:00"));
        Assert.Throws<FormatException>(() => TelemetryJson.ParseTime("2026-12-02T08:00:00.0000001Z"));
    }

    [Fact]
    public void Messages_round_trip_exactly_including_awkward_doubles()
    {
        TelemetryMessage[] messages =
        [
            new("van-03", "gnss", EightAmUs, "a") { LatDeg = 46.123456789012345, LonDeg = -0.1 - 0.2, AccuracyM = 4.0, AccuracyKind = "one_sigma" },
            new("van-03", "gnss", EightAmUs + 7, "b") { LatDeg = -89.999999999, LonDeg = 179.99999999999997, AccuracyM = 0.3, AccuracyKind = "one_sigma", SpeedMps = 0.0, SpeedAccuracyMps = 0.1 },
            new("van-03", "wheel", EightAmUs + 8, "c") { SpeedMps = double.Epsilon },
            new("van-03", "imu", EightAmUs + 9, "d") { YawRateDps = Math.PI, AccelMps2 = -9.80665 },
        ];
        foreach (TelemetryMessage m in messages)
        {
            Assert.Equal(m, TelemetryJson.Deserialize(TelemetryJson.Serialize(m)));
        }
    }

    [Fact]
    public void Non_finite_numbers_are_refused()
    {
        var m = new TelemetryMessage("van-01", "wheel", EightAmUs, "x") { SpeedMps = double.NaN };
        Assert.Throws<ArgumentException>(() => TelemetryJson.Serialize(m));
    }

    [Fact]
    public void Ndjson_is_one_object_per_line_each_ended_by_a_newline()
    {
        TelemetryMessage[] messages =
        [
            new("van-01", "wheel", EightAmUs, "1") { SpeedMps = 1 },
            new("van-01", "imu", EightAmUs, "2") { YawRateDps = 2 },
            new("van-02", "wheel", EightAmUs, "3") { SpeedMps = 3 },
        ];
        string text = System.Text.Encoding.UTF8.GetString(TelemetryJson.ToNdjson(messages));
        Assert.EndsWith("\n", text, StringComparison.Ordinal);
        string[] lines = text[..^1].Split('\n');
        Assert.Equal(3, lines.Length);
        for (int i = 0; i < lines.Length; i++)
        {
            using JsonDocument doc = JsonDocument.Parse(lines[i]);
            Assert.Equal(JsonValueKind.Object, doc.RootElement.ValueKind);
            Assert.Equal(messages[i], TelemetryJson.Read(doc.RootElement));
        }

        Assert.Equal(messages, TelemetryJson.ReadNdjson(text));
    }
}
