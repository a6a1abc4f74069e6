// Validation of telemetry messages into core measurements.
using System.Globalization;
using System.Text.Json;
using System.Text.RegularExpressions;
using FusionService.Estimation.Measurements;

namespace FusionService.Ingest;

/// <summary>
/// Turns one JSON telemetry message into core measurements or says which field is wrong and why. Fields:
/// <c>vehicle</c>, <c>kind</c> (gnss | wheel | imu), <c>time</c> (RFC 3339 string or Unix milliseconds), optional
/// <c>id</c>; gnss: <c>lat_deg</c>, <c>lon_deg</c>, <c>accuracy_m</c> with <c>accuracy_kind</c> (one_sigma default,
/// cep50, r68, r95, drms) or <c>hdop</c>, optional <c>speed_mps</c>, <c>course_deg</c>, <c>speed_accuracy_mps</c>;
/// wheel: <c>speed_mps</c>; imu: <c>yaw_rate_dps</c>, optional <c>accel_mps2</c>.
/// </summary>
/// <param name="options">Ingest options (UERE, default speed accuracy).</param>
/// <param name="minTimeUs">Earliest accepted time, Unix microseconds (start of the storage window).</param>
/// <param name="maxTimeUs">Latest accepted time, Unix microseconds (server clock plus the allowed skew).</param>
public sealed partial class TelemetryMessageParser(IngestOptions options, long minTimeUs, long maxTimeUs)
{
    /// <summary>Longest vehicle id, characters.</summary>
    public const int MaxVehicleIdLength = 128;

    /// <summary>Longest message id, characters.</summary>
    public const int MaxIdLength = 200;

    private const double DegToRad = Math.PI / 180.0;

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
        if (vehicle.Length > MaxVehicleIdLength || !VehicleIdPattern().IsMatch(vehicle))
        {
            throw new FieldException("vehicle", "must be 1-128 characters of A-Z a-z 0-9 . _ : -");
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
            if (idElement.ValueKind != JsonValueKind.String || idElement.GetString() is not { Length: > 0 and <= MaxIdLength } text)
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

        double sigmaM;
        double? accuracy = OptionalNumber(m, "accuracy_m");
        double? hdop = OptionalNumber(m, "hdop");
        if (accuracy is double value)
        {
            if (value <= 0)
            {
                throw new FieldException("accuracy_m", "must be positive");
            }

            sigmaM = HorizontalAccuracy.ToSigmaPerAxisM(value, ParseAccuracyKind(m));
        }
        else if (hdop is double dop)
        {
            if (dop <= 0)
            {
                throw new FieldException("hdop", "must be positive");
            }

            sigmaM = HorizontalAccuracy.FromHdop(dop, options.HdopUereM);
        }
        else
        {
            throw new FieldException("accuracy_m", "is required (or give hdop)");
        }

        double? speed = OptionalNumber(m, "speed_mps");
        double? course = OptionalNumber(m, "course_deg");
        double? speedAccuracy = OptionalNumber(m, "speed_accuracy_mps");
        if (speed is null && (course is not null || speedAccuracy is not null))
        {
            throw new FieldException("speed_mps", "is required when course_deg or speed_accuracy_mps is given");
        }

        if (speed is < 0 or > 150)
        {
            throw new FieldException("speed_mps", "must be within [0, 150] m/s");
        }

        if (course is < 0 or >= 360)
        {
            throw new FieldException("course_deg", "must be within [0, 360) degrees clockwise from north");
        }

        if (speedAccuracy is <= 0)
        {
            throw new FieldException("speed_accuracy_mps", "must be positive");
        }

        double courseRad = course is double c ? c * DegToRad : double.NaN;
        double speedSigma = speedAccuracy ?? options.DefaultSpeedAccuracyMps;
        ulong key = id is null
            ? MessageKeys.FromContent("gnss", timeUs, [lat, lon, sigmaM, speed ?? double.NaN, courseRad, speed is null ? double.NaN : speedSigma])
            : MessageKeys.FromId(id);
        var position = Measurement.GnssPosition(timeUs, key, lat, lon, sigmaM);
        return speed is double s
            ? new ParsedMessage(vehicle, [position, Measurement.GnssVelocity(timeUs, key, s, courseRad, speedSigma)])
            : new ParsedMessage(vehicle, [position]);
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

        double accel = OptionalNumber(m, "accel_mps2") ?? double.NaN;
        if (accel is < -50 or > 50)
        {
            throw new FieldException("accel_mps2", "must be within [-50, 50] m/s^2");
        }

        ulong key = id is null ? MessageKeys.FromContent("imu", timeUs, [yawRateRps, accel]) : MessageKeys.FromId(id);
        return new ParsedMessage(vehicle, [Measurement.Imu(timeUs, key, yawRateRps, accel)]);
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
            string text = t.GetString()!;
            if (!Rfc3339Pattern().IsMatch(text)
                || !DateTimeOffset.TryParse(text, CultureInfo.InvariantCulture, DateTimeStyles.None, out var instant))
            {
                throw new FieldException("time", "must be an RFC 3339 date-time with an offset (e.g. 2026-05-01T08:30:00.250Z)");
            }

            timeUs = (instant.UtcTicks - DateTime.UnixEpoch.Ticks) / 10;
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
            throw new FieldException("time", "is older than the storage window (starts " + DateTime.UnixEpoch.AddTicks(minTimeUs * 10).ToString("O", CultureInfo.InvariantCulture) + ")");
        }

        return timeUs;
    }

    private static AccuracyConvention ParseAccuracyKind(JsonElement m)
    {
        if (!m.TryGetProperty("accuracy_kind", out var k) || k.ValueKind == JsonValueKind.Null)
        {
            return AccuracyConvention.OneSigmaPerAxis;
        }

        return (k.ValueKind == JsonValueKind.String ? k.GetString() : null) switch
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

        if (e.ValueKind != JsonValueKind.String || e.GetString() is not { Length: > 0 } text)
        {
            throw new FieldException(name, "must be a non-empty string");
        }

        return text;
    }

    private static double RequiredNumber(JsonElement m, string name) =>
        OptionalNumber(m, name) ?? throw new FieldException(name, "is required");

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

    [GeneratedRegex("^[A-Za-z0-9._:-]{1,128}$", RegexOptions.CultureInvariant)]
    private static partial Regex VehicleIdPattern();

    [GeneratedRegex(@"^\d{4}-\d{2}-\d{2}[Tt]\d{2}:\d{2}:\d{2}(\.\d{1,7})?([Zz]|[+-]\d{2}:\d{2})$", RegexOptions.CultureInvariant)]
    private static partial Regex Rfc3339Pattern();

    private sealed class FieldException(string field, string message) : Exception(message)
    {
        public string Field { get; } = field;
    }
}
