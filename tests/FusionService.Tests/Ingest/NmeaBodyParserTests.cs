// NMEA 0183 parsing: checksums, talkers, GGA/RMC pairing, field layouts and per-line verdicts (issue 4).
// Every sentence below was written for these tests (invented positions near 46.2 N, 8.5 E) following the field layout
// of the NMEA 0183 standard: GGA = time, lat ddmm.mmmm, N|S, lon dddmm.mmmm, E|W, quality, satellites, HDOP, altitude, M,
// geoid separation, M, age, station; RMC = time, status, lat, N|S, lon, E|W, speed (knots), course (deg true), date
// ddmmyy, variation, E|W, mode. The two hex digits after '*' are the XOR of the characters between '$' and '*',
// computed once by a byte-wise XOR and written in by hand; the parser is never asked what they should be.
using FusionService.Ingest.Nmea;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Ingest;

public sealed class NmeaBodyParserTests
{
    // 2026-03-14T09:30:15.25Z; 15.5 kn; course 92.4 deg. Checksums 0x49 and 0x7A.
    private const string Rmc = "$GNRMC,093015.25,A,4612.345,N,00828.278,E,15.5,92.4,140326,,,A*49";
    private const string Gga = "$GNGGA,093015.25,4612.345,N,00828.278,E,1,09,1.2,512.3,M,47.1,M,,*7A";

    private static readonly long Epoch = new DateTimeOffset(2026, 3, 14, 9, 30, 15, 250, TimeSpan.Zero).ToUnixTimeMilliseconds() * 1000;

    [Fact]
    public void Issue4_checksum_is_the_xor_between_dollar_and_star()
    {
        // By hand: 'G' 0x47 ^ 'N' 0x4E = 0x09; ^ 'R' 0x52 = 0x5B; ^ 'M' 0x4D = 0x16; ^ 'C' 0x43 = 0x55.
        Assert.Equal(0x55, NmeaChecksum.Compute("GNRMC"));
        Assert.Equal(0x00, NmeaChecksum.Compute(string.Empty));
        Assert.True(NmeaSentence.TryParse(Rmc, out var rmc, out _, out _));
        Assert.Equal(("GN", "RMC", 12), (rmc!.Talker, rmc.Formatter, rmc.Fields.Count));
        Assert.True(NmeaSentence.TryParse(Gga + "\r", out _, out _, out _));
        Assert.True(NmeaSentence.TryParse(Gga.Replace("*7A", "*7a", StringComparison.Ordinal), out _, out _, out _));
    }

    [Theory]
    [InlineData("$GNGGA,093015.25,4612.345,N,00828.278,E,1,09,1.2,512.3,M,47.1,M,,*7B", "checksum", "stated 7B but the sentence's characters give 7A")]
    [InlineData("$GNGGA,093015.25,4612.345,N,00828.278,E,1,09,1.2,512.3,M,47.1,M,,", "checksum", "missing")]
    [InlineData("$GNGGA,093015.25,4612.345,N,00828.278,E,1,09,1.2,512.3,M,47.1,M,,*7", "checksum", "not two hexadecimal digits")]
    [InlineData("GNGGA,093015.25,4612.345,N,00828.278,E,1,09,1.2,512.3,M,47.1,M,,*7A", "", "must start with '$'")]
    // One digit of the latitude changed (4612.345 -> 4612.346): '5' 0x35 ^ '6' 0x36 = 0x03, so the characters give 0x7A ^ 0x03 = 0x79.
    [InlineData("$GNGGA,093015.25,4612.346,N,00828.278,E,1,09,1.2,512.3,M,47.1,M,,*7A", "checksum", "stated 7A but the sentence's characters give 79")]
    public void Issue4_bad_checksums_are_rejected_with_the_reason(string line, string field, string reason)
    {
        var result = NmeaBodyParser.Parse(line);
        Assert.Empty(result.Fixes);
        var verdict = Assert.Single(result.Lines);
        Assert.Equal((1, "rejected", field), (verdict.Line, verdict.Status, verdict.Field));
        Assert.Contains(reason, verdict.Reason, StringComparison.Ordinal);
    }

    /// <summary>The XOR checksum cannot see two characters swapped (a known weakness of a parity sum): such a line passes the check.</summary>
    [Fact]
    public void Issue4_a_transposition_passes_the_checksum_as_the_standard_defines_it()
    {
        Assert.True(NmeaSentence.TryParse("$GNGGA,093015.25,4612.354,N,00828.278,E,1,09,1.2,512.3,M,47.1,M,,*7A", out _, out _, out _));
    }

    /// <summary>
    /// Position, speed and time checked against values worked by hand from the standard's units: 4612.345,N is
    /// 46 + 12.345/60 = 46.205750 deg; 00828.278,E is 8 + 28.278/60 = 8.471300 deg; 15.5 kn x 1852/3600 =
    /// 7.973888... m/s (the international nautical mile is 1852 m exactly; derived).
    /// </summary>
    [Fact]
    public void Issue4_a_gga_and_the_rmc_of_its_epoch_make_one_fix_with_hand_computed_values()
    {
        var result = NmeaBodyParser.Parse(Rmc + "\r\n" + Gga + "\r\n");
        Assert.Empty(result.Lines);
        var fix = Assert.Single(result.Fixes);
        Assert.Equal([2, 1], fix.Lines);
        Assert.Equal(Epoch, fix.TimeUs);
        AssertNear.Equal(46.205750, fix.LatDeg, 1e-9, "latitude (deg)");
        AssertNear.Equal(8.471300, fix.LonDeg, 1e-9, "longitude (deg)");
        AssertNear.Equal(1.2, fix.Hdop, 1e-12, "HDOP");
        AssertNear.Equal(15.5 * 1852.0 / 3600.0, fix.SpeedMps!.Value, 1e-12, "speed (m/s)");
        AssertNear.Equal(7.9738888888888889, fix.SpeedMps!.Value, 1e-12, "speed (m/s)");
        AssertNear.Equal(92.4, fix.CourseDeg!.Value, 1e-12, "course (deg)");
    }

    /// <summary>3351.220,S is -(33 + 51.220/60) = -33.853667 deg; 15112.480,W is -(151 + 12.480/60) = -151.208 deg (by hand).</summary>
    [Fact]
    public void Issue4_south_and_west_are_negative_and_a_missing_course_stays_missing()
    {
        // Checksums 0x5D (RMC) and 0x77 (GGA); LF only.
        var result = NmeaBodyParser.Parse("$GPRMC,101500,A,3351.220,S,15112.480,W,0.0,,140326,,,D*5D\n$GPGGA,101500,3351.220,S,15112.480,W,2,07,2.5,20.0,M,22.0,M,,*77\n");
        var fix = Assert.Single(result.Fixes);
        AssertNear.Equal(-(33 + (51.220 / 60)), fix.LatDeg, 1e-12, "latitude (deg)");
        AssertNear.Equal(-33.8536667, fix.LatDeg, 1e-7, "latitude (deg)");
        AssertNear.Equal(-151.208, fix.LonDeg, 1e-9, "longitude (deg)");
        Assert.Equal(0.0, fix.SpeedMps);
        Assert.Null(fix.CourseDeg);
        Assert.Equal(new DateTimeOffset(2026, 3, 14, 10, 15, 0, TimeSpan.Zero).ToUnixTimeMilliseconds() * 1000, fix.TimeUs);
    }

    [Fact]
    public void Issue4_talkers_gp_gn_gl_ga_are_accepted_and_others_reported()
    {
        string body = string.Join("\n",
            Rmc,
            "$GLGGA,120000.00,4612.400,N,00828.300,E,1,06,0.8,510.0,M,47.1,M,,*7F",
            "$BDGGA,093016.00,4612.350,N,00828.290,E,1,09,1.2,512.3,M,47.1,M,,*73",
            "$GPGSV,3,1,11,03,03,111,00,04,15,270,00,06,01,010,00,13,06,292,00*74",
            "$GPRMC,101500,A,3351.220,S,15112.480,W,0.0,,140326,,,D*5D",
            "$GPGGA,101500,3351.220,S,15112.480,W,2,07,2.5,20.0,M,22.0,M,,*77");
        var result = NmeaBodyParser.Parse(body);
        var talker = result.Lines.Single(l => l.Line == 3);
        Assert.Equal(("rejected", "talker"), (talker.Status, talker.Field));
        Assert.Contains("'BD'", talker.Reason, StringComparison.Ordinal);
        var gsv = result.Lines.Single(l => l.Line == 4);
        Assert.Equal(("ignored", "formatter"), (gsv.Status, gsv.Field));

        // GL: no RMC of its epoch, so it takes the date of the nearest RMC before it (line 1) and has no speed.
        var gl = result.Fixes.Single(f => f.Lines.SequenceEqual([2]));
        Assert.Equal(new DateTimeOffset(2026, 3, 14, 12, 0, 0, TimeSpan.Zero).ToUnixTimeMilliseconds() * 1000, gl.TimeUs);
        Assert.Null(gl.SpeedMps);

        // The GN RMC of line 1 has no GGA of its epoch: it states no accuracy.
        var lone = result.Lines.Single(l => l.Line == 1);
        Assert.Equal(("rejected", "hdop"), (lone.Status, lone.Field));
        Assert.Single(result.Fixes, f => f.Lines.SequenceEqual([6, 5]));
        Assert.Equal(6, result.SentenceLines);
    }

    [Fact]
    public void Issue4_a_gga_without_any_rmc_date_is_rejected_with_the_reason()
    {
        var result = NmeaBodyParser.Parse(Gga);
        Assert.Empty(result.Fixes);
        var verdict = Assert.Single(result.Lines);
        Assert.Equal(("rejected", "time"), (verdict.Status, verdict.Field));
        Assert.Contains("no date", verdict.Reason, StringComparison.Ordinal);
    }

    [Fact]
    public void Issue4_a_gga_just_after_midnight_takes_the_next_day_from_an_rmc_just_before()
    {
        // RMC 23:59:59 on 2026-03-14 (checksum 0x43), Galileo GGA 00:00:01 (checksum 0x70): 2026-03-15T00:00:01Z.
        var result = NmeaBodyParser.Parse(
            "$GNRMC,235959.00,A,4612.345,N,00828.278,E,5.0,180.0,140326,,,A*43\n$GAGGA,000001.00,4612.300,N,00828.278,E,1,06,1.0,510.0,M,47.1,M,,*70");
        var fix = Assert.Single(result.Fixes);
        Assert.Equal(new DateTimeOffset(2026, 3, 15, 0, 0, 1, TimeSpan.Zero).ToUnixTimeMilliseconds() * 1000, fix.TimeUs);
        Assert.Equal(("rejected", "hdop"), (result.Lines.Single().Status, result.Lines.Single().Field));
    }

    [Fact]
    public void Issue4_no_fix_void_status_dead_reckoning_and_missing_hdop_are_reported_per_line()
    {
        string body = string.Join("\r\n",
            "$GNGGA,093017.00,,,,,0,00,99.99,,,,,,*74",
            "$GNRMC,093017.00,V,,,,,,,140326,,,N*6D",
            string.Empty,
            Rmc,
            Gga,
            "$GNRMC,080000.00,A,4612.345,N,00828.278,E,10.0,45.0,140326,,,A*46",
            "$GNGGA,080001.00,4612.346,N,00828.279,E,1,06,,510.0,M,47.1,M,,*5B",
            "$GNGGA,093018.00,4612.360,N,00828.300,E,6,06,1.0,510.0,M,47.1,M,,*72");
        var result = NmeaBodyParser.Parse(body);
        Assert.Equal(7, result.SentenceLines);
        var byLine = result.Lines.ToDictionary(l => l.Line);
        Assert.Equal(("ignored", "fix_quality"), (byLine[1].Status, byLine[1].Field));
        Assert.Contains("no fix", byLine[1].Reason, StringComparison.Ordinal);
        Assert.Equal(("ignored", "status"), (byLine[2].Status, byLine[2].Field));
        Assert.Equal(("rejected", "hdop"), (byLine[7].Status, byLine[7].Field));
        Assert.Equal(("ignored", "fix_quality"), (byLine[8].Status, byLine[8].Field));
        Assert.Contains("dead-reckoning", byLine[8].Reason, StringComparison.Ordinal);
        Assert.Equal(("rejected", "hdop"), (byLine[6].Status, byLine[6].Field));
        Assert.False(byLine.ContainsKey(3));
        var fix = Assert.Single(result.Fixes);
        Assert.Equal([5, 4], fix.Lines);
    }

    [Theory]
    [InlineData("4807.038", "N", 2, 48.1173)]
    [InlineData("0000.000", "S", 2, 0.0)]
    [InlineData("9000.000", "N", 2, 90.0)]
    [InlineData("18000.0000", "W", 3, -180.0)]
    [InlineData("01131.5", "E", 3, 11.525)]
    public void Issue4_coordinates_are_degrees_plus_minutes_over_sixty(string value, string hemisphere, int degreeDigits, double expectedDeg)
    {
        // By hand: 48 + 7.038/60 = 48.1173; 11 + 31.5/60 = 11.525.
        AssertNear.Equal(expectedDeg, NmeaBodyParser.ReadCoordinate(value, hemisphere, degreeDigits)!.Value, 1e-12, "coordinate (deg)");
    }

    [Theory]
    [InlineData("4860.000", "N", 2)]
    [InlineData("9100.000", "N", 2)]
    [InlineData("4807.038", "E", 2)]
    [InlineData("807.038", "N", 2)]
    [InlineData("", "N", 2)]
    [InlineData("18000.001", "E", 3)]
    public void Issue4_invalid_coordinates_are_refused(string value, string hemisphere, int degreeDigits) =>
        Assert.Null(NmeaBodyParser.ReadCoordinate(value, hemisphere, degreeDigits));

    [Theory]
    [InlineData("000000", 0L)]
    [InlineData("235959.999", 86_399_999_000L)]
    [InlineData("093015.25", 34_215_250_000L)]
    public void Issue4_times_of_day_are_read_to_the_microsecond(string value, long expectedUs) =>
        Assert.Equal(expectedUs, NmeaBodyParser.ReadTimeOfDay(value));

    [Theory]
    [InlineData("240000")]
    [InlineData("236000")]
    [InlineData("12345")]
    [InlineData("123456,5")]
    public void Issue4_invalid_times_are_refused(string value) => Assert.Null(NmeaBodyParser.ReadTimeOfDay(value));
}
