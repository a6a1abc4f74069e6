// The hostile inputs of issue 14 that need no service: judged by the parsers and policies directly.
using System.Text;
using System.Text.Json;
using FusionService.Dashboard;
using FusionService.Http;
using FusionService.Ingest;
using FusionService.Ingest.Nmea;

namespace FusionService.Tests.Hostile;

public sealed class HostileFieldTests
{
    private static readonly TelemetryMessageParser Parser = new(new IngestOptions(), 0, long.MaxValue);

    private static MessageRejection? Rejection(byte[] json)
    {
        using var document = JsonDocument.Parse(json);
        Parser.Parse(document.RootElement, out var rejection);
        return rejection;
    }

    [Fact]
    public void A_trailing_newline_does_not_make_a_look_alike_vehicle()
    {
        // .NET regex: '$' also matches before a final "\n"; '\z' only at the very end.
        Assert.True(TelemetryMessageParser.IsValidVehicleId("van-1"));
        Assert.False(TelemetryMessageParser.IsValidVehicleId("van-1\n"));
        var rejection = Rejection("""{"vehicle":"van-1\n","kind":"wheel","time":1,"speed_mps":1}"""u8.ToArray());
        Assert.Equal("vehicle", rejection?.Field);
    }

    [Theory]
    [InlineData("vehicle")]
    [InlineData("kind")]
    [InlineData("time")]
    [InlineData("id")]
    public void Invalid_utf8_in_a_string_field_rejects_that_field(string field)
    {
        // 0xFF never occurs in UTF-8 (RFC 3629 section 1).
        string json = """{"vehicle":"van-1","kind":"wheel","time":"2026-05-01T08:30:00Z","id":"a","speed_mps":1}""".Replace("\"" + field + "\":\"", "\"" + field + "\":\"@", StringComparison.Ordinal);
        byte[] bytes = Encoding.UTF8.GetBytes(json);
        bytes[Array.IndexOf(bytes, (byte)'@')] = 0xFF;
        var rejection = Rejection(bytes);
        Assert.Equal(field, rejection?.Field);
        Assert.Contains("not valid Unicode", rejection!.Reason, StringComparison.Ordinal);
    }

    [Fact]
    public void A_lone_surrogate_escape_rejects_that_field()
    {
        // RFC 8259 section 8.2: an escaped unpaired surrogate is not a Unicode character.
        var rejection = Rejection("""{"vehicle":"van-1","kind":"wheel","time":"\ud800","speed_mps":1}"""u8.ToArray());
        Assert.Equal("time", rejection?.Field);
    }

    [Theory]
    [InlineData("accuracy_m", "1e-320")]
    [InlineData("accuracy_m", "0.009")]
    [InlineData("hdop", "5e-324")]
    public void A_near_zero_position_accuracy_is_rejected(string field, string value)
    {
        string json = "{\"vehicle\":\"v\",\"kind\":\"gnss\",\"time\":1,\"lat_deg\":48,\"lon_deg\":11,\"" + field + "\":" + value + "}";
        Assert.Equal(field, Rejection(Encoding.UTF8.GetBytes(json))?.Field);
    }

    [Fact]
    public void A_near_zero_speed_accuracy_is_dropped_with_the_velocity()
    {
        using var document = JsonDocument.Parse("""{"vehicle":"v","kind":"gnss","time":1,"lat_deg":48,"lon_deg":11,"accuracy_m":3,"speed_mps":5,"speed_accuracy_mps":1e-320}""");
        var message = Parser.Parse(document.RootElement, out _);
        Assert.NotNull(message);
        Assert.Single(message.Measurements);
        Assert.Contains(message.DroppedFields, d => d.Field == "speed_accuracy_mps");
    }

    [Theory]
    [InlineData("0001-01-01T00:00:00Z")]
    [InlineData("9999-12-31T23:59:59Z")]
    [InlineData("9000-01-01T00:00:00.000001Z")]
    [InlineData("1969-12-31T23:59:59Z")]
    [InlineData("-1")]
    public void A_time_parameter_outside_1970_to_9000_is_refused_with_the_range(string text)
    {
        Assert.Contains("outside the accepted range", QueryTime.Check(text, out _), StringComparison.Ordinal);
    }

    [Fact]
    public void The_ends_of_the_query_time_range_are_accepted()
    {
        Assert.Null(QueryTime.Check("1970-01-01T00:00:00Z", out long first));
        Assert.Equal(0, first);
        Assert.Null(QueryTime.Check("9000-01-01T00:00:00Z", out long last));
        Assert.Equal(QueryTime.MaxTimeUs, last);
        Assert.Equal(new DateTime(9000, 1, 1, 0, 0, 0, DateTimeKind.Utc), DateTime.UnixEpoch.AddTicks(last * 10));
    }

    [Theory]
    [InlineData("NaN", "speed")]
    [InlineData("Infinity", "speed")]
    public void An_rmc_with_a_non_finite_speed_keeps_the_fix_and_drops_the_speed(string speed, string field)
    {
        // Sentence layouts per NMEA 0183 GGA/RMC; checksums computed as the standard defines (XOR between $ and *).
        string gga = Sentence("GPGGA,123519.00,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,");
        string rmc = Sentence("GPRMC,123519.00,A,4807.038,N,01131.000,E," + speed + ",084.4,230394,,,A");
        var parsed = NmeaBodyParser.Parse(gga + "\r\n" + rmc + "\r\n");
        var fix = Assert.Single(parsed.Fixes);
        Assert.Null(fix.SpeedMps);
        Assert.Contains(fix.DroppedFields, d => d.Field == field);
    }

    [Fact]
    public void The_dashboard_policy_forbids_framing_and_admits_the_tile_origin()
    {
        string policy = DashboardContentSecurityPolicy.For(new DashboardOptions { TileUrlTemplate = "https://{s}.tiles.example.org/{z}/{x}/{y}.png" });
        Assert.Contains("frame-ancestors 'none'", policy, StringComparison.Ordinal);
        Assert.Contains("img-src 'self' data: https://*.tiles.example.org;", policy, StringComparison.Ordinal);
        Assert.Contains("script-src 'self';", DashboardContentSecurityPolicy.For(new DashboardOptions()), StringComparison.Ordinal);
        Assert.Equal("https://tiles.example.org:8443", DashboardContentSecurityPolicy.TileSource("https://tiles.example.org:8443/{z}/{x}/{y}.png"));
        Assert.Equal("https:", DashboardContentSecurityPolicy.TileSource("https://tiles-{s}.example.org/{z}/{x}/{y}.png"));
        Assert.Null(DashboardContentSecurityPolicy.TileSource("javascript:alert(1)"));
    }

    private static string Sentence(string payload) =>
        "$" + payload + "*" + NmeaChecksum.Compute(payload).ToString("X2", System.Globalization.CultureInfo.InvariantCulture);
}
