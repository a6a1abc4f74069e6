// Validation of telemetry messages into core measurements.
using System.Globalization;
using System.Text.Json;
using System.Text.RegularExpressions;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Time;

namespace FusionService.Ingest;

/// <summary>
/// Turns one JSON telemetry message into core measurements or says which field is wrong and why. Fields:
/// <c>vehicle</c>, <c>kind</c> (gnss | wheel | imu), <c>time</c> (RFC 3339 string or Unix milliseconds), optional
/// <c>id</c>; gnss: <c>lat_deg</c>, <c>lon_deg</c>, <c>accuracy_m</c> with <c>accuracy_kind</c> (one_sigma default,
/// cep50, r68, r95, drms) or <c>hdop</c>, optional <c>speed_mps</c>, <c>course_deg</c>, <c>speed_accuracy_mps</c>;
/// wheel: <c>speed_mps</c>; imu: <c>yaw_rate_dps</c>, optional <c>accel_mps2</c>.
/// </summary>
/// <remarks>
/// <para>A bad required field rejects the message with the field and the reason. A bad optional field is left out
/// and listed in <see cref="ParsedMessage.DroppedFields"/>; the rest of the message is used, never dropped for it:</para>
/// <list type="bullet">
/// <item><c>course_deg</c> in [0, 360]; 360.0 (which receivers emit for a course just below north) is read as 0.
/// A course that is not a number or outside [0, 360] is dropped: the speed is kept with the course absent.</item>
/// <item><c>speed_mps</c> (gnss) in [0, <see cref="MaxGnssSpeedMps"/>]; a bad one drops the velocity measurement
/// (with its course and speed accuracy), the position is kept.</item>
/// <item><c>speed_accuracy_mps</c> in [<see cref="MinSpeedAccuracyMps"/>, <see cref="MaxSpeedAccuracyMps"/>]; a bad one drops the velocity
/// measurement (speed and course), the position is kept. Without it the configured default accuracy is used.</item>
/// <item><c>course_deg</c> or <c>speed_accuracy_mps</c> without a usable <c>speed_mps</c> are dropped.</item>
/// <item><c>hdop</c> beside <c>accuracy_m</c> is not used; a bad one is dropped.</item>
/// <item><c>accel_mps2</c> (imu) in [-50, 50] m/s^2; a bad one is dropped, the yaw rate kept.</item>
/// </list>
/// <para>The position accuracy is required: <c>accuracy_m</c> in [<see cref="MinAccuracyM"/>, <see cref="MaxAccuracyM"/>] m, or
/// without it <c>hdop</c> in [<see cref="MinHdop"/>, <see cref="MaxHdop"/>]. Values beyond these plausibility bounds (such as 1e50 or 1e-320) reject the
/// message: no receiver reports them, and the filter cannot use them.</para>
/// </remarks>
/// <param name="options">Ingest options (UERE, default speed accuracy).</param>
/// <param name="minTimeUs">Earliest accepted time, Unix microseconds (start of the storage window).</param>
/// <param name="maxTimeUs">Latest accepted time, Unix microseconds (server clock plus the allowed skew).</param>
public sealed partial class TelemetryMessageParser(IngestOptions options, long minTimeUs, long maxTimeUs)
{
    /// <summary>Longest vehicle id, characters.</summary>
    public const int MaxVehicleIdLength = 128;

    /// <summary>Longest message id, characters.</summary>
    public const int MaxIdLength = 200;

    /// <summary>Largest accepted <c>accuracy_m</c>, metres (any <c>accuracy_kind</c>). A plausibility bound, common
    /// practice rather than a standard: a consumer receiver's worst usable fix (cold start, deep urban canyon) reports
    /// tens to a few hundred metres; 10 km leaves ample room and keeps absurd values (1e50) out of the filter.</summary>
    public const double MaxAccuracyM = 10_000;

    /// <summary>Smallest accepted <c>accuracy_m</c>, metres: 1 cm, what an RTK-fixed receiver reports (common practice).
    /// Smaller positive values (1e-320) would give the filter a measurement variance of practically zero, which no
    /// receiver can claim and which breaks the covariance update's positive definiteness.</summary>
    public const double MinAccuracyM = 0.01;

    /// <summary>Smallest accepted <c>hdop</c>: 0.01, the smallest non-zero value the two-decimal NMEA 0183 GGA field holds.</summary>
    public const double MinHdop = 0.01;

    /// <summary>Smallest accepted <c>speed_accuracy_mps</c>, m/s: 1 cm/s, below what any receiver states for its Doppler speed
    /// (common practice; a near-zero variance would break the covariance update as for <see cref="MinAccuracyM"/>).</summary>
    public const double MinSpeedAccuracyMps = 0.01;

    /// <summary>Largest accepted <c>hdop</c>: 99.99, the largest value the NMEA 0183 GGA field holds (receivers send it
    /// when they have no usable geometry).</summary>
    public const double MaxHdop = 99.99;

    /// <summary>Largest accepted GNSS <c>speed_mps</c>, m/s (540 km/h): a road vehicle's GNSS speed above it is a
    /// receiver fault.</summary>
    public const double MaxGnssSpeedMps = 150;

    /// <summary>Largest accepted <c>speed_accuracy_mps</c>, m/s. A plausibility bound, common practice: receivers
    /// state Doppler speed accuracy in tenths of a m/s to a few m/s; a stated accuracy above 50 m/s says the speed is
    /// unknown, and absurd values (1e308) are kept out of the filter.</summary>
    public const double MaxSpeedAccuracyMps = 50;

    private const double DegToRad = Math.PI / 180.0;
    private const string HdopRange = "must be within [0.01, 99.99] (the range of the NMEA 0183 GGA field)";

    /// <summary>What a vehicle id may be, for error messages.</summary>
    public const string VehicleIdRule = "must be 1-128 characters of A-Z a-z 0-9 . _ : -";

    /// <summary>Whether <paramref name="vehicle"/> is a vehicle id the ingest accepts (so one that can exist).</summary>
    public static bool IsValidVehicleId(string vehicle) =>
        vehicle.Length <= MaxVehicleIdLength && VehicleIdPattern().IsMatch(vehicle);

    /// <summary>Parses one message.</summary>
    /// <returns>The message, or null with <paramref name="rejection"/> set.</returns>
    public ParsedMessage? Parse(JsonElement message, out MessageRejection? rejection)
    {
        rejection = null;
        try
        {
            return ParseOrThrow(message);
        }
        catch (FieldException ex)
        {
            rejection = new MessageRejection(ex.Field, ex.Message);
            return null;
        }
    }

    private ParsedMessage ParseOrThrow(JsonElement m)
    {
        if (m.ValueKind != JsonValueKind.Object)
        {
            throw new FieldException(string.Empty, "a message must be a JSON object");
        }

        string vehicle = RequiredString(m, "vehicle");
        if (!IsValidVehicleId(vehicle))
        {
            throw new FieldException("vehicle", VehicleIdRule);
        }

        string kind = RequiredString(m, "kind");
        if (kind is not ("gnss" or "wheel" or "imu"))
        {
            throw new FieldException("kind", "unknown kind '" + kind + "'; expected gnss, wheel or imu");
        }

        long timeUs = ParseTime(m);
        string? id = null;
        if (m.TryGetProperty("id", out var idElement) && idElement.ValueKind != JsonValueKind.Null)
        {
            if (idElement.ValueKind != JsonValueKind.String || ReadText(idElement, "id") is not { Length: > 0 and <= MaxIdLength } text)
            {
                throw new FieldException("id", "must be a string of 1-200 characters");
            }

            id = text;
        }

        return kind switch
        {
            "gnss" => ParseGnss(m, vehicle, timeUs, id),
            "wheel" => ParseWheel(m, vehicle, timeUs, id),
            _ => ParseImu(m, vehicle, timeUs, id),
        };
    }

    private ParsedMessage ParseGnss(JsonElement m, string vehicle, long timeUs, string? id)
    {
        double lat = RequiredNumber(m, "lat_deg");
        if (lat is < -90 or > 90)
        {
            throw new FieldException("lat_deg", "must be within [-90, 90] degrees");
        }

        double lon = RequiredNumber(m, "lon_deg");
        if (lon is < -180 or > 180)
        {
            throw new FieldException("lon_deg", "must be within [-180, 180] degrees");
        }

        var dropped = new List<DroppedField>();
        (double sigmaM, bool sigmaFromHdop) = ParsePositionSigma(m, dropped);
        var (speed, courseRad, speedSigma) = ParseVelocity(m, dropped);
        ulong key = id is null
            ? MessageKeys.FromContent("gnss", timeUs, [lat, lon, sigmaM, speed ?? double.NaN, courseRad, speed is null ? double.NaN : speedSigma])
            : MessageKeys.FromId(id);
        var position = Measurement.GnssPosition(timeUs, key, lat, lon, sigmaM, sigmaFromHdop);
        Measurement[] measurements = speed is double s
            ? [position, Measurement.GnssVelocity(timeUs, key, s, courseRad, speedSigma)]
            : [position];
        return new ParsedMessage(vehicle, measurements) { DroppedFields = dropped };
    }

    // The position needs an accuracy: a bad accuracy_m (or, without it, a bad hdop) rejects the message. An hdop given
    // beside accuracy_m is not used, so a bad one is only dropped. Returns the 1-sigma per-axis accuracy and whether it
    // came from the hdop (HDOP × the configured UERE: its scale is an assumption, Measurement.GnssPosition says so).
    private (double SigmaM, bool FromHdop) ParsePositionSigma(JsonElement m, List<DroppedField> dropped)
    {
        if (IsGiven(m, "accuracy_m"))
        {
            double value = RequiredNumber(m, "accuracy_m");
            if (value <= 0)
            {
                throw new FieldException("accuracy_m", "must be positive");
            }

            if (value < MinAccuracyM)
            {
                throw new FieldException("accuracy_m", string.Create(CultureInfo.InvariantCulture,
                    $"must be at least {MinAccuracyM:0.##} m (no receiver is more accurate); got {value:G6} m"));
            }

            if (value > MaxAccuracyM)
            {
                throw new FieldException("accuracy_m", string.Create(CultureInfo.InvariantCulture,
                    $"must be at most {MaxAccuracyM:0} m (plausibility bound for a GNSS fix); got {value:G6} m"));
            }

            var convention = ParseAccuracyKind(m);
            double? ignoredHdop = OptionalNumberOrDrop(m, "hdop", dropped);
            if (ignoredHdop is < MinHdop or > MaxHdop)
            {
                dropped.Add(new DroppedField("hdop", HdopRange + "; not needed, accuracy_m gives the accuracy"));
            }

            return (HorizontalAccuracy.ToSigmaPerAxisM(value, convention), false);
        }

        if (IsGiven(m, "hdop"))
        {
            double dop = RequiredNumber(m, "hdop");
            if (dop is < MinHdop or > MaxHdop)
            {
                throw new FieldException("hdop", HdopRange);
            }

            return (HorizontalAccuracy.FromHdop(dop, options.HdopUereM), true);
        }

        throw new FieldException("accuracy_m", "is required (or give hdop)");
    }

    // Speed, course and speed accuracy are optional: a bad one is dropped, never the position. Without a usable speed
    // (or its accuracy) there is no velocity measurement; a bad course leaves the speed with the course absent (NaN).
    private (double? SpeedMps, double CourseRad, double SpeedSigmaMps) ParseVelocity(JsonElement m, List<DroppedField> dropped)
    {
        double? speed = OptionalNumberOrDrop(m, "speed_mps", dropped);
        if (speed is < 0 or > MaxGnssSpeedMps)
        {
            dropped.Add(new DroppedField("speed_mps", string.Create(CultureInfo.InvariantCulture, $"must be within [0, {MaxGnssSpeedMps:0}] m/s")));
            speed = null;
        }

        double? course = OptionalNumberOrDrop(m, "course_deg", dropped);
        if (course == 360)
        {
            // Receivers round a course just below north up to 360.0; it is the same direction as 0.
            course = 0;
        }
        else if (course is < 0 or > 360)
        {
            dropped.Add(new DroppedField("course_deg", "must be within [0, 360] degrees clockwise from north"));
            course = null;
        }

        int before = dropped.Count;
        double? speedAccuracy = OptionalNumberOrDrop(m, "speed_accuracy_mps", dropped);
        if (speedAccuracy is < MinSpeedAccuracyMps or > MaxSpeedAccuracyMps)
        {
            dropped.Add(new DroppedField("speed_accuracy_mps", string.Create(CultureInfo.InvariantCulture,
                $"must be within [{MinSpeedAccuracyMps:0.##}, {MaxSpeedAccuracyMps:0}] m/s (plausibility bounds for a GNSS speed accuracy)")));
            speedAccuracy = null;
        }

        bool speedAccuracyBad = dropped.Count > before;
        if (speed is null)
        {
            string why = IsGiven(m, "speed_mps") ? "not used: speed_mps is invalid" : "not used without speed_mps";
            if (course is not null)
            {
                dropped.Add(new DroppedField("course_deg", why));
            }

            if (speedAccuracy is not null)
            {
                dropped.Add(new DroppedField("speed_accuracy_mps", why));
            }

            return (null, double.NaN, double.NaN);
        }

        if (speedAccuracyBad)
        {
            // The stated accuracy is the only weight the speed has; without a sound one, the velocity is not used.
            const string Why = "not used: speed_accuracy_mps is invalid, so the speed has no usable accuracy";
            dropped.Add(new DroppedField("speed_mps", Why));
            if (course is not null)
            {
                dropped.Add(new DroppedField("course_deg", Why));
            }

            return (null, double.NaN, double.NaN);
        }

        return (speed, course is double c ? c * DegToRad : double.NaN, speedAccuracy ?? options.DefaultSpeedAccuracyMps);
    }

    private static ParsedMessage ParseWheel(JsonElement m, string vehicle, long timeUs, string? id)
    {
        double speed = RequiredNumber(m, "speed_mps");
        if (speed is < -60 or > 150)
        {
            throw new FieldException("speed_mps", "must be within [-60, 150] m/s");
        }

        ulong key = id is null ? MessageKeys.FromContent("wheel", timeUs, [speed]) : MessageKeys.FromId(id);
        return new ParsedMessage(vehicle, [Measurement.WheelSpeed(timeUs, key, speed)]);
    }

    private static ParsedMessage ParseImu(JsonElement m, string vehicle, long timeUs, string? id)
    {
        double yawRateDps = RequiredNumber(m, "yaw_rate_dps");
        double yawRateRps = yawRateDps * DegToRad;
        if (Math.Abs(yawRateRps) > 10)
        {
            throw new FieldException("yaw_rate_dps", "must be within [-572.9, 572.9] deg/s (10 rad/s)");
        }

        var dropped = new List<DroppedField>();
        double accel = OptionalNumberOrDrop(m, "accel_mps2", dropped) ?? double.NaN;
        if (accel is < -50 or > 50)
        {
            dropped.Add(new DroppedField("accel_mps2", "must be within [-50, 50] m/s^2"));
            accel = double.NaN;
        }

        ulong key = id is null ? MessageKeys.FromContent("imu", timeUs, [yawRateRps, accel]) : MessageKeys.FromId(id);
        return new ParsedMessage(vehicle, [Measurement.Imu(timeUs, key, yawRateRps, accel)]) { DroppedFields = dropped };
    }

    private long ParseTime(JsonElement m)
    {
        if (!m.TryGetProperty("time", out var t) || t.ValueKind == JsonValueKind.Null)
        {
            throw new FieldException("time", "is required (RFC 3339 string or Unix milliseconds)");
        }

        long timeUs;
        if (t.ValueKind == JsonValueKind.String)
        {
            string text = ReadText(t, "time");
            if (!Rfc3339Pattern().IsMatch(text)
                || !DateTimeOffset.TryParse(text, CultureInfo.InvariantCulture, DateTimeStyles.None, out var instant))
            {
                throw new FieldException("time", "must be an RFC 3339 date-time with an offset (e.g. 2026-05-01T08:30:00.250Z)");
            }

            timeUs = UnixMicroseconds.FromDateTimeOffset(instant);
        }
        else if (t.ValueKind == JsonValueKind.Number)
        {
            if (!t.TryGetDouble(out double ms) || !double.IsFinite(ms) || ms < 0 || ms > 253_402_300_799_000)
            {
                throw new FieldException("time", "must be a finite number of Unix milliseconds");
            }

            timeUs = (long)Math.Round(ms * 1000.0, MidpointRounding.ToEven);
        }
        else
        {
            throw new FieldException("time", "must be an RFC 3339 string or a number of Unix milliseconds");
        }

        if (timeUs > maxTimeUs)
        {
            throw new FieldException("time", string.Create(CultureInfo.InvariantCulture,
                $"lies {(timeUs - maxTimeUs + (long)(options.MaxFutureSkewS * 1e6)) / 1e6:0.###} s in the future; at most {options.MaxFutureSkewS:0.###} s allowed"));
        }

        if (timeUs < minTimeUs)
        {
            throw new FieldException("time", "is older than the storage window (starts " + UnixMicroseconds.ToDateTimeUtc(minTimeUs).ToString("O", CultureInfo.InvariantCulture) + ")");
        }

        return timeUs;
    }

    private static AccuracyConvention ParseAccuracyKind(JsonElement m)
    {
        if (!m.TryGetProperty("accuracy_kind", out var k) || k.ValueKind == JsonValueKind.Null)
        {
            return AccuracyConvention.OneSigmaPerAxis;
        }

        return (k.ValueKind == JsonValueKind.String ? ReadText(k, "accuracy_kind") : null) switch
        {
            "one_sigma" => AccuracyConvention.OneSigmaPerAxis,
            "cep50" => AccuracyConvention.Cep50,
            "r68" => AccuracyConvention.Radius68,
            "r95" => AccuracyConvention.Radius95,
            "drms" => AccuracyConvention.Drms,
            _ => throw new FieldException("accuracy_kind", "must be one of one_sigma, cep50, r68, r95, drms"),
        };
    }

    private static string RequiredString(JsonElement m, string name)
    {
        if (!m.TryGetProperty(name, out var e) || e.ValueKind == JsonValueKind.Null)
        {
            throw new FieldException(name, "is required");
        }

        if (e.ValueKind != JsonValueKind.String || ReadText(e, name) is not { Length: > 0 } text)
        {
            throw new FieldException(name, "must be a non-empty string");
        }

        return text;
    }

    // A JSON string as text. Invalid UTF-8 bytes or an escaped lone surrogate ("\ud800") cannot become a .NET
    // string: System.Text.Json throws InvalidOperationException for them, which would otherwise fail the whole batch.
    private static string ReadText(JsonElement e, string name)
    {
        try
        {
            return e.GetString()!;
        }
        catch (InvalidOperationException)
        {
            throw new FieldException(name, "is not valid Unicode text (invalid UTF-8 or an unpaired surrogate escape)");
        }
    }

    private static double RequiredNumber(JsonElement m, string name) =>
        OptionalNumber(m, name) ?? throw new FieldException(name, "is required");

    private static bool IsGiven(JsonElement m, string name) =>
        m.TryGetProperty(name, out var e) && e.ValueKind != JsonValueKind.Null;

    // An optional number that is present but not a finite number is dropped (recorded) and read as absent.
    private static double? OptionalNumberOrDrop(JsonElement m, string name, List<DroppedField> dropped)
    {
        if (!m.TryGetProperty(name, out var e) || e.ValueKind == JsonValueKind.Null)
        {
            return null;
        }

        if (e.ValueKind != JsonValueKind.Number || !e.TryGetDouble(out double value) || !double.IsFinite(value))
        {
            dropped.Add(new DroppedField(name, "must be a finite number"));
            return null;
        }

        return value;
    }

    private static double? OptionalNumber(JsonElement m, string name)
    {
        if (!m.TryGetProperty(name, out var e) || e.ValueKind == JsonValueKind.Null)
        {
            return null;
        }

        if (e.ValueKind != JsonValueKind.Number || !e.TryGetDouble(out double value) || !double.IsFinite(value))
        {
            throw new FieldException(name, "must be a finite number");
        }

        return value;
    }

    // \z, not $: '$' also matches before a final newline, which would let "van-1\n" pass as a look-alike of "van-1".
    [GeneratedRegex(@"^[A-Za-z0-9._:-]{1,128}\z", RegexOptions.CultureInvariant)]
    private static partial Regex VehicleIdPattern();

    [GeneratedRegex(@"^\d{4}-\d{2}-\d{2}[Tt]\d{2}:\d{2}:\d{2}(\.\d{1,7})?([Zz]|[+-]\d{2}:\d{2})\z", RegexOptions.CultureInvariant)]
    private static partial Regex Rfc3339Pattern();

    private sealed class FieldException(string field, string message) : Exception(message)
    {
        public string Field { get; } = field;
    }
}
