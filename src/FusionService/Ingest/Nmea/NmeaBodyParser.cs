// Reads GGA and RMC sentences of one body into GNSS fixes.
using System.Globalization;
using FusionService.Estimation.Time;

namespace FusionService.Ingest.Nmea;

/// <summary>
/// Turns a body of NMEA 0183 sentences (one per line, CR LF or LF) into GNSS fixes, with a verdict for every line that
/// gives none. Pure: no clock, no I/O. Field layouts follow the NMEA 0183 standard:
/// GGA: time hhmmss.ss, latitude ddmm.mmmm, N|S, longitude dddmm.mmmm, E|W, fix quality, satellites, HDOP, altitude ...;
/// RMC: time, status A|V, latitude, N|S, longitude, E|W, speed over ground (knots), course over ground (degrees true),
/// date ddmmyy, magnetic variation, E|W, mode indicator (from version 2.3).
/// </summary>
/// <remarks>
/// <list type="bullet">
/// <item>Talker ids GP, GN, GL and GA are accepted; other talkers are rejected. Formatters other than GGA and RMC are ignored.</item>
/// <item>A GGA gives the fix: position and HDOP (the accuracy, via HDOP x UERE). Fix quality 0 (no fix), 6 (dead
/// reckoning), 7 (manual input) and 8 (simulator) are ignored; 1-5 are used.</item>
/// <item>GGA has no date. It takes the date of the RMC of the same epoch (equal time of day) in the body, and from that
/// RMC also speed (knots x 1852 / 3600 = m/s) and course. Without one, it takes the date of the nearest valid RMC
/// before it in the body, moved by a day when the times of day lie more than 12 h apart (midnight); without any, the
/// GGA is rejected.</item>
/// <item>Speed and course are optional: an RMC speed or course that is not a number, or a course above 360, is
/// dropped (listed for the RMC line) and the fix kept; a course without a valid speed is dropped too. A course of
/// 360 is read as 0.</item>
/// <item>RMC status V (void) and mode indicators N (not valid) and E (estimated) are ignored. An RMC without a GGA of
/// the same epoch is rejected: it states no accuracy.</item>
/// <item>Two-digit years are read as 2000-2099.</item>
/// </list>
/// </remarks>
public static class NmeaBodyParser
{
    /// <summary>Knots to metres per second: one international nautical mile is 1852 m exactly, per 3600 s.</summary>
    public const double KnotsToMps = 1852.0 / 3600.0;

    private const long MicrosecondsPerDay = 86_400_000_000L;
    private static readonly string[] AcceptedTalkers = ["GP", "GN", "GL", "GA"];

    /// <summary>Parses <paramref name="body"/>.</summary>
    public static NmeaParseResult Parse(string body)
    {
        ArgumentNullException.ThrowIfNull(body);
        var verdicts = new List<NmeaLineResult>();
        var ggas = new List<Gga>();
        var rmcs = new List<Rmc>();
        var ignoredGgaTimes = new Dictionary<long, int>();
        string[] lines = body.Split('\n');
        int sentenceLines = 0;
        for (int i = 0; i < lines.Length; i++)
        {
            int number = i + 1;
            string line = lines[i].Trim();
            if (line.Length == 0)
            {
                continue;
            }

            sentenceLines++;
            if (!NmeaSentence.TryParse(line, out var sentence, out string field, out string reason))
            {
                verdicts.Add(new NmeaLineResult(number, "rejected", field, reason));
                continue;
            }

            if (Array.IndexOf(AcceptedTalkers, sentence!.Talker) < 0)
            {
                verdicts.Add(new NmeaLineResult(number, "rejected", "talker", "talker id '" + sentence.Talker + "' is not accepted (GP, GN, GL or GA)"));
                continue;
            }

            try
            {
                switch (sentence.Formatter)
                {
                    case "GGA":
                        var gga = ReadGga(number, sentence.Fields);
                        if (gga.IgnoredReason is { } why)
                        {
                            verdicts.Add(new NmeaLineResult(number, "ignored", "fix_quality", why));
                            ignoredGgaTimes.TryAdd(gga.TimeOfDayUs, number);
                        }
                        else
                        {
                            ggas.Add(gga);
                        }

                        break;
                    case "RMC":
                        var rmc = ReadRmc(number, sentence.Fields);
                        if (rmc.IgnoredReason is { } ignored)
                        {
                            verdicts.Add(new NmeaLineResult(number, "ignored", rmc.IgnoredField, ignored));
                        }
                        else
                        {
                            rmcs.Add(rmc);
                        }

                        break;
                    default:
                        verdicts.Add(new NmeaLineResult(number, "ignored", "formatter", sentence.Formatter + " sentences are not used (only GGA and RMC)"));
                        break;
                }
            }
            catch (FieldException ex)
            {
                verdicts.Add(new NmeaLineResult(number, "rejected", ex.Field, ex.Message));
            }
        }

        var fixes = new List<NmeaFix>();
        var paired = new HashSet<int>();
        foreach (var gga in ggas)
        {
            var partner = rmcs.FirstOrDefault(r => r.TimeOfDayUs == gga.TimeOfDayUs && !paired.Contains(r.Line));
            if (partner is not null)
            {
                paired.Add(partner.Line);
                long time = StartOfDayUs(partner.Date) + gga.TimeOfDayUs;
                fixes.Add(new NmeaFix(time, gga.LatDeg, gga.LonDeg, gga.Hdop, partner.SpeedMps, partner.SpeedMps is null ? null : partner.CourseDeg, [gga.Line, partner.Line])
                {
                    DroppedFields = partner.DroppedFields,
                });
                continue;
            }

            var before = rmcs.LastOrDefault(r => r.Line < gga.Line);
            if (before is null)
            {
                verdicts.Add(new NmeaLineResult(gga.Line, "rejected", "time", "GGA carries no date and no valid RMC sentence precedes it in this body"));
                continue;
            }

            long rmcTime = StartOfDayUs(before.Date) + before.TimeOfDayUs;
            long ggaTime = StartOfDayUs(before.Date) + gga.TimeOfDayUs;
            if (ggaTime - rmcTime > MicrosecondsPerDay / 2)
            {
                ggaTime -= MicrosecondsPerDay;
            }
            else if (rmcTime - ggaTime > MicrosecondsPerDay / 2)
            {
                ggaTime += MicrosecondsPerDay;
            }

            fixes.Add(new NmeaFix(ggaTime, gga.LatDeg, gga.LonDeg, gga.Hdop, null, null, [gga.Line]));
        }

        foreach (var rmc in rmcs.Where(r => !paired.Contains(r.Line)))
        {
            verdicts.Add(ignoredGgaTimes.TryGetValue(rmc.TimeOfDayUs, out int ggaLine)
                ? new NmeaLineResult(rmc.Line, "ignored", "fix_quality", string.Create(CultureInfo.InvariantCulture, $"the GGA of the same epoch (line {ggaLine}) reports no usable fix"))
                : new NmeaLineResult(rmc.Line, "rejected", "hdop", "RMC states no accuracy; send the GGA sentence of the same epoch in the same body"));
        }

        verdicts.Sort((a, b) => a.Line.CompareTo(b.Line));
        return new NmeaParseResult(fixes, verdicts, sentenceLines);
    }

    /// <summary>Reads an NMEA latitude (ddmm.mmmm) or longitude (dddmm.mmmm) with its hemisphere letter, degrees.</summary>
    /// <param name="value">The number field.</param>
    /// <param name="hemisphere">N, S, E or W.</param>
    /// <param name="degreeDigits">2 for latitude, 3 for longitude.</param>
    /// <returns>Degrees, negative south and west; null when the field is not a valid coordinate.</returns>
    public static double? ReadCoordinate(string value, string hemisphere, int degreeDigits)
    {
        ArgumentNullException.ThrowIfNull(value);
        ArgumentNullException.ThrowIfNull(hemisphere);
        int dot = value.IndexOf('.', StringComparison.Ordinal);
        int integerDigits = dot < 0 ? value.Length : dot;
        if (integerDigits != degreeDigits + 2
            || !int.TryParse(value.AsSpan(0, degreeDigits), NumberStyles.None, CultureInfo.InvariantCulture, out int degrees)
            || !double.TryParse(value.AsSpan(degreeDigits), NumberStyles.AllowDecimalPoint, CultureInfo.InvariantCulture, out double minutes)
            || !double.IsFinite(minutes)
            || minutes >= 60)
        {
            return null;
        }

        double result = degrees + (minutes / 60.0);
        double limit = degreeDigits == 2 ? 90 : 180;
        if (result > limit)
        {
            return null;
        }

        (string positive, string negative) = degreeDigits == 2 ? ("N", "S") : ("E", "W");
        return hemisphere == positive ? result : hemisphere == negative ? -result : null;
    }

    /// <summary>Reads an NMEA time of day hhmmss[.sss], microseconds after midnight UTC; null when invalid.</summary>
    public static long? ReadTimeOfDay(string value)
    {
        ArgumentNullException.ThrowIfNull(value);
        if (value.Length < 6
            || !int.TryParse(value.AsSpan(0, 2), NumberStyles.None, CultureInfo.InvariantCulture, out int hours)
            || !int.TryParse(value.AsSpan(2, 2), NumberStyles.None, CultureInfo.InvariantCulture, out int minutes)
            || !int.TryParse(value.AsSpan(4, 2), NumberStyles.None, CultureInfo.InvariantCulture, out int seconds)
            || hours > 23 || minutes > 59 || seconds > 59)
        {
            return null;
        }

        long fractionUs = 0;
        if (value.Length > 6)
        {
            string fraction = value[6..];
            if (fraction[0] != '.' || fraction.Length is < 2 or > 7
                || !long.TryParse(fraction.AsSpan(1), NumberStyles.None, CultureInfo.InvariantCulture, out long digits))
            {
                return null;
            }

            fractionUs = digits * (long)Math.Pow(10, 7 - fraction.Length);
        }

        return (((((hours * 60L) + minutes) * 60L) + seconds) * 1_000_000L) + fractionUs;
    }

    private static Gga ReadGga(int line, IReadOnlyList<string> f)
    {
        if (f.Count < 8)
        {
            throw new FieldException(string.Empty, string.Create(CultureInfo.InvariantCulture, $"GGA needs at least 8 data fields, found {f.Count}"));
        }

        long time = ReadTimeOfDay(f[0]) ?? throw new FieldException("time", "'" + f[0] + "' is not a UTC time hhmmss.ss");
        if (!int.TryParse(f[5], NumberStyles.None, CultureInfo.InvariantCulture, out int quality) || quality > 8)
        {
            throw new FieldException("fix_quality", "'" + f[5] + "' is not a fix quality 0-8");
        }

        string? ignored = quality switch
        {
            0 => "fix quality 0: no fix",
            6 => "fix quality 6: a dead-reckoning estimate, not a measurement",
            7 => "fix quality 7: a manually entered position",
            8 => "fix quality 8: simulator output",
            _ => null,
        };
        if (ignored is not null)
        {
            return new Gga(line, time, 0, 0, 0, ignored);
        }

        double lat = ReadCoordinate(f[1], f[2], 2) ?? throw new FieldException("latitude", "'" + f[1] + "," + f[2] + "' is not a latitude ddmm.mmmm,N|S");
        double lon = ReadCoordinate(f[3], f[4], 3) ?? throw new FieldException("longitude", "'" + f[3] + "," + f[4] + "' is not a longitude dddmm.mmmm,E|W");
        if (f[7].Length == 0)
        {
            throw new FieldException("hdop", "is empty; the HDOP states the fix's accuracy and is required");
        }

        if (!double.TryParse(f[7], NumberStyles.AllowDecimalPoint, CultureInfo.InvariantCulture, out double hdop) || !(hdop >= 0.01) || hdop > 99.99)
        {
            throw new FieldException("hdop", "'" + f[7] + "' is not an HDOP in [0.01, 99.99]");
        }

        return new Gga(line, time, lat, lon, hdop, null);
    }

    private static Rmc ReadRmc(int line, IReadOnlyList<string> f)
    {
        if (f.Count < 9)
        {
            throw new FieldException(string.Empty, string.Create(CultureInfo.InvariantCulture, $"RMC needs at least 9 data fields, found {f.Count}"));
        }

        long time = ReadTimeOfDay(f[0]) ?? throw new FieldException("time", "'" + f[0] + "' is not a UTC time hhmmss.ss");
        if (f[1] == "V")
        {
            return new Rmc(line, time, default, null, null, "status", "status V: the receiver marks this fix as void");
        }

        if (f[1] != "A")
        {
            throw new FieldException("status", "'" + f[1] + "' is not A (valid) or V (void)");
        }

        if (f.Count > 11 && f[11].Length > 0 && f[11] is "N" or "E")
        {
            return new Rmc(line, time, default, null, null, "mode", f[11] == "N" ? "mode N: data not valid" : "mode E: a dead-reckoning estimate, not a measurement");
        }

        _ = ReadCoordinate(f[2], f[3], 2) ?? throw new FieldException("latitude", "'" + f[2] + "," + f[3] + "' is not a latitude ddmm.mmmm,N|S");
        _ = ReadCoordinate(f[4], f[5], 3) ?? throw new FieldException("longitude", "'" + f[4] + "," + f[5] + "' is not a longitude dddmm.mmmm,E|W");
        // Speed and course are optional: a bad one is dropped (and said so), never the RMC's date or the fix.
        var dropped = new List<DroppedField>();
        double? speed = null;
        if (f[6].Length > 0)
        {
            // double.TryParse reads "NaN" and "Infinity" whatever the NumberStyles: they are not speeds.
            if (double.TryParse(f[6], NumberStyles.AllowDecimalPoint, CultureInfo.InvariantCulture, out double knots) && double.IsFinite(knots))
            {
                speed = knots * KnotsToMps;
            }
            else
            {
                dropped.Add(new DroppedField("speed", "'" + f[6] + "' is not a speed in knots"));
            }
        }

        double? course = null;
        if (f[7].Length > 0)
        {
            if (double.TryParse(f[7], NumberStyles.AllowDecimalPoint, CultureInfo.InvariantCulture, out double degrees) && double.IsFinite(degrees) && degrees <= 360)
            {
                course = degrees >= 360 ? 0 : degrees;
            }
            else
            {
                dropped.Add(new DroppedField("course", "'" + f[7] + "' is not a course in [0, 360] degrees"));
            }
        }

        if (speed is null && course is not null)
        {
            dropped.Add(new DroppedField("course", "not used without a valid speed"));
            course = null;
        }

        if (f[8].Length != 6
            || !int.TryParse(f[8].AsSpan(0, 2), NumberStyles.None, CultureInfo.InvariantCulture, out int day)
            || !int.TryParse(f[8].AsSpan(2, 2), NumberStyles.None, CultureInfo.InvariantCulture, out int month)
            || !int.TryParse(f[8].AsSpan(4, 2), NumberStyles.None, CultureInfo.InvariantCulture, out int year)
            || month is < 1 or > 12 || day < 1 || day > DateTime.DaysInMonth(2000 + year, month))
        {
            throw new FieldException("date", "'" + f[8] + "' is not a date ddmmyy");
        }

        return new Rmc(line, time, new DateOnly(2000 + year, month, day), speed, course, null, null) { DroppedFields = dropped };
    }

    private static long StartOfDayUs(DateOnly date) => UnixMicroseconds.StartOfUtcDay(date);

    private sealed record Gga(int Line, long TimeOfDayUs, double LatDeg, double LonDeg, double Hdop, string? IgnoredReason);

    private sealed record Rmc(int Line, long TimeOfDayUs, DateOnly Date, double? SpeedMps, double? CourseDeg, string? IgnoredField, string? IgnoredReason)
    {
        public IReadOnlyList<DroppedField> DroppedFields { get; init; } = [];
    }

    private sealed class FieldException(string field, string message) : Exception(message)
    {
        public string Field { get; } = field;
    }
}
