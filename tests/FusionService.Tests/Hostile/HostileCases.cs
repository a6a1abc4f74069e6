// Seeded generator of malformed and hostile requests against every input of the service.
using System.Globalization;
using System.Text;
using System.Text.Json;
using FusionService.Ingest.Nmea;

namespace FusionService.Tests.Hostile;

/// <summary>
/// Generates the hostile requests of <see cref="HostileInputRunTests"/>: broken JSON and NDJSON, every field of every
/// message kind with every wrong type, NaN/Infinity, huge and tiny numbers, deep nesting, long strings, invalid UTF-8
/// and lone surrogates, times far past and future, bad query parameters, foreign and malformed keys, NMEA sentences
/// with bad fields and valid checksums, and oversized bodies. Deterministic for a seed.
/// </summary>
internal sealed class HostileCases(Random rng, HostileKeys keys, DateTimeOffset now)
{
    public const string Vehicle = "van-h";

    private static readonly string[] BadValues =
    [
        "null", "true", "false", "0", "-1", "1", "\"\"", "\"x\"", "[]", "{}", "[1,2]", "{\"a\":1}", "1e308", "-1e308", "1e-320",
        "5e-324", "-0", "1e400", "-1e400", "\"NaN\"", "\"Infinity\"", "\"-Infinity\"", "\"1e999\"", "123456789012345678901234567890",
        "0.000000000000000000000000000000000001", "\"\\u0000\"", "\"\\ud800\"", "\"\\udc00x\"", "\"van-1\\n\"", "\"2026-05-01T08:30:00Z\"",
        "9007199254740993", "-9223372036854775809", "18446744073709551616", "\"" + new string('x', 300) + "\"",
    ];

    private static readonly string[] BadTimes =
    [
        "\"0001-01-01T00:00:00Z\"", "\"9999-12-31T23:59:59.9999999Z\"", "\"1969-12-31T23:59:59Z\"", "\"2026-13-45T25:61:61Z\"",
        "\"2026-05-01T08:30:00\"", "\"2026-05-01 08:30:00Z\"", "\"2026-05-01T08:30:60Z\"", "\"+2026-05-01T08:30:00Z\"", "-1", "1e20",
        "253402300800000", "253402300799000", "-62135596800000", "0", "\"0\"", "\"now\"", "\"2026-05-01T08:30:00Z\\n\"",
        "\"2026-05-01T08:30:00.12345678Z\"", "\"2026-05-01T08:30:00+24:00\"", "1.7976931348623157e308",
    ];

    private static readonly string[] BadQueryTimes =
    [
        "0001-01-01T00:00:00Z", "9999-12-31T23:59:59Z", "9999-12-31T23:59:59.9999999Z", "1e300", "-1", "NaN", "Infinity", "-Infinity",
        "253402300800000", "2026-05-01", "2026-05-01T08:30:00", "now", "", "%00", "%FF%FE", "%ED%A0%80", "1969-12-31T23:00:00Z",
        "2026-05-01T08:30:00%2B99:99", "9000-01-01T00:00:00.0000001Z", new string('9', 400),
    ];

    private readonly string _time = "\"" + now.AddMinutes(-5).ToString("yyyy-MM-dd'T'HH:mm:ss.fff'Z'", CultureInfo.InvariantCulture) + "\"";

    /// <summary>Every generated request, shuffled by the seed.</summary>
    public List<HostileRequest> Generate()
    {
        var list = new List<HostileRequest>();
        list.AddRange(WrongTypes());
        list.AddRange(BrokenJson(1200));
        list.AddRange(Strings());
        list.AddRange(Ndjson(900));
        list.AddRange(Nmea(1000));
        list.AddRange(Queries(1600));
        list.AddRange(Keys());
        list.AddRange(FleetAdministration());
        list.AddRange(RawBodies());
        for (int i = list.Count - 1; i > 0; i--)
        {
            int j = rng.Next(i + 1);
            (list[i], list[j]) = (list[j], list[i]);
        }

        return list;
    }

    /// <summary>A message of <paramref name="kind"/> as ordered fields (name, raw JSON value).</summary>
    public List<(string Name, string Value)> Message(string kind) => kind switch
    {
        "gnss" =>
        [
            ("vehicle", "\"" + Vehicle + "\""), ("kind", "\"gnss\""), ("time", _time), ("id", "\"g-" + rng.Next() + "\""), ("lat_deg", "48.1"),
            ("lon_deg", "11.5"), ("accuracy_m", "4.5"), ("accuracy_kind", "\"cep50\""), ("hdop", "0.9"), ("speed_mps", "8.2"), ("course_deg", "91"),
            ("speed_accuracy_mps", "0.4"),
        ],
        "wheel" => [("vehicle", "\"" + Vehicle + "\""), ("kind", "\"wheel\""), ("time", _time), ("id", "\"w-" + rng.Next() + "\""), ("speed_mps", "8.1")],
        _ => [("vehicle", "\"" + Vehicle + "\""), ("kind", "\"imu\""), ("time", _time), ("id", "\"i-" + rng.Next() + "\""), ("yaw_rate_dps", "2.5"), ("accel_mps2", "0.3")],
    };

    public static string Object(IEnumerable<(string Name, string Value)> fields) =>
        "{" + string.Join(",", fields.Select(f => JsonSerializer.Serialize(f.Name) + ":" + f.Value)) + "}";

    private static byte[] Utf8(string text) => Encoding.UTF8.GetBytes(text);

    private HostileRequest Post(string label, byte[] body, string contentType = "application/json", string? auth = null) =>
        new(label, HostileTransport.Http, HttpMethod.Post, "/v1/telemetry", contentType, body, auth ?? keys.Ingest);

    // Every field of every kind replaced by every bad value, and by each bad time; some with a valid neighbour.
    private IEnumerable<HostileRequest> WrongTypes()
    {
        foreach (string kind in new[] { "gnss", "wheel", "imu" })
        {
            int fields = Message(kind).Count;
            for (int f = 0; f < fields; f++)
            {
                foreach (string bad in BadValues.Concat(f == 2 ? BadTimes : []))
                {
                    var message = Message(kind);
                    message[f] = (message[f].Name, bad);
                    yield return Post("type " + kind + "." + message[f].Name + "=" + bad[..Math.Min(bad.Length, 20)], Utf8("[" + Object(message) + "]"));
                }

                var without = Message(kind);
                without.RemoveAt(f);
                yield return Post("missing " + kind + "." + Message(kind)[f].Name, Utf8("[" + Object(without) + "]"));
            }
        }

        // Random combinations: several fields wrong at once, foreign fields, duplicated fields.
        for (int i = 0; i < 4200; i++)
        {
            var message = Message(new[] { "gnss", "wheel", "imu" }[rng.Next(3)]);
            int wrong = 1 + rng.Next(3);
            for (int w = 0; w < wrong; w++)
            {
                int f = rng.Next(message.Count);
                message[f] = (message[f].Name, BadValues[rng.Next(BadValues.Length)]);
            }

            switch (rng.Next(5))
            {
                case 0:
                    message.Add(("foreign_" + rng.Next(100), BadValues[rng.Next(BadValues.Length)]));
                    break;
                case 1:
                    message.Add(message[rng.Next(message.Count)]);
                    break;
                case 2:
                    message.Insert(0, ("", "1"));
                    break;
                case 3:
                    message.Add(("__proto__", "{\"polluted\":true}"));
                    break;
                default:
                    break;
            }

            yield return Post("combo " + i, Utf8("[" + Object(message) + "]"));
        }

        foreach (string literal in new[] { "NaN", "Infinity", "-Infinity", "+1", ".5", "01", "1.", "0x10", "1_000" })
        {
            var message = Message("gnss");
            message[4] = ("lat_deg", literal);
            yield return Post("literal " + literal, Utf8("[" + Object(message) + "]"));
        }

        yield return Post("huge array of numbers", Utf8("[" + string.Join(",", Enumerable.Repeat("1", 20_000)) + "]")) with { Status = 413 };
        yield return Post("empty array", Utf8("[]")) with { Status = 400 };
        yield return Post("not an array", Utf8(Object(Message("gnss")))) with { Status = 400 };
        yield return Post("array of scalars", Utf8("[1,\"x\",null,true,[],{}]")) with { Status = 400 };
        yield return Post("deep array 10000", Utf8(new string('[', 10_000) + new string(']', 10_000))) with { Status = 400 };
        yield return Post("deep object 10000", Utf8(string.Concat(Enumerable.Repeat("{\"a\":", 10_000)) + "1" + new string('}', 10_000))) with { Status = 400 };
        var deepField = Message("gnss");
        deepField[4] = ("lat_deg", new string('[', 5_000) + new string(']', 5_000));
        yield return Post("deep field 5000", Utf8("[" + Object(deepField) + "]")) with { Status = 400 };
        foreach (int f in new[] { 0, 1, 2, 3 })
        {
            var message = Message("wheel");
            message[f] = (message[f].Name, "\"" + new string('v', 1 << 20) + "\"");
            yield return Post("1 MB string in " + message[f].Name, Utf8("[" + Object(message) + "]")) with { Status = 400 };
        }

        var longKey = Message("wheel");
        longKey.Add((new string('k', 1 << 20), "1"));
        yield return Post("1 MB foreign key", Utf8("[" + Object(longKey) + "]"));
    }

    // Broken JSON: truncated, bytes flipped, stray tokens, comments, single quotes, BOMs, binary.
    private IEnumerable<HostileRequest> BrokenJson(int count)
    {
        string[] fixedBodies = ["", " ", "[", "]", "{", "[,]", "[1,]", "[{},]", "null", "true", "\"x\"", "[{'vehicle':'v'}]", "/* c */[]", "[{}]//",
            "\uFEFF[]", "[{\"vehicle\":\"van-h\"", "[{\"a\" 1}]", "[{\"a\":}]", "[\"\\x\"]", "[\"\\u12\"]", "[\"a\u0001b\"]"];
        foreach (string body in fixedBodies)
        {
            yield return Post("broken " + body, Utf8(body));
        }

        for (int i = 0; i < count; i++)
        {
            byte[] body = Utf8("[" + Object(Message(new[] { "gnss", "wheel", "imu" }[rng.Next(3)])) + "]");
            switch (rng.Next(3))
            {
                case 0:
                    body = body[..rng.Next(body.Length)];
                    break;
                case 1:
                    body[rng.Next(body.Length)] = (byte)rng.Next(256);
                    break;
                default:
                    body[rng.Next(body.Length)] = "{}[]\":,\\"u8[rng.Next(8)];
                    break;
            }

            yield return Post("mangled " + i, body);
        }

        foreach (string type in new[] { "text/plain", "application/xml", "multipart/form-data; boundary=x", "application/json; charset=utf-16" })
        {
            yield return Post("content type " + type, Utf8("[" + Object(Message("wheel")) + "]"), type);
        }
    }

    // Invalid UTF-8 and lone surrogate escapes in each string field and in a key.
    private IEnumerable<HostileRequest> Strings()
    {
        byte[][] badBytes = [[0xFF], [0xC3], [0xED, 0xA0, 0x80], [0xF4, 0x90, 0x80, 0x80], [0xC0, 0xAF], [0x80]];
        string[] escapes = ["\\ud800", "\\udfff", "\\ud800\\ud800", "x\\udc00", "\\u0000"];
        foreach (string field in new[] { "vehicle", "kind", "time", "id", "accuracy_kind" })
        {
            foreach (var bytes in badBytes)
            {
                yield return Post("utf8 in " + field, Splice(field, bytes));
            }

            foreach (string escape in escapes)
            {
                var message = Message("gnss");
                int f = message.FindIndex(m => m.Name == field);
                message[f] = (field, "\"" + escape + "\"");
                yield return Post("escape in " + field, Utf8("[" + Object(message) + "]"));
            }
        }

        var keyed = Utf8("[" + Object(Message("wheel")) + "]").ToList();
        keyed.InsertRange(2, (byte[])[0xFF, 0xFE]);
        yield return Post("utf8 in a key", [.. keyed]);
    }

    private byte[] Splice(string field, byte[] bytes)
    {
        var message = Message("gnss");
        int f = message.FindIndex(m => m.Name == field);
        message[f] = (field, "\"@@\"");
        byte[] text = Utf8("[" + Object(message) + "]");
        int at = text.AsSpan().IndexOf("@@"u8);
        return [.. text[..at], .. bytes, .. text[(at + 2)..]];
    }

    private IEnumerable<HostileRequest> Ndjson(int count)
    {
        const string Nd = "application/x-ndjson";
        var million = new byte[2_000_000];
        for (int i = 0; i < million.Length; i += 2)
        {
            million[i] = (byte)'x';
            million[i + 1] = (byte)'\n';
        }

        yield return Post("ndjson million one-character lines", million, Nd) with { Status = 413 };
        yield return Post("ndjson 10001 objects", Utf8(string.Concat(Enumerable.Repeat("{}\n", 10_001))), Nd) with { Status = 413 };
        yield return Post("ndjson blank lines only", Utf8("\n\r\n \n\t\n"), Nd) with { Status = 400 };
        string[] lines = ["x", "{", "}", "[]", "null", "1", "\"s\"", "{\"a\":1", "{}", "{}{}", " {\"kind\":\"wheel\"} ", "\u00ff", "{\"vehicle\":\"\\ud800\"}"];
        for (int i = 0; i < count; i++)
        {
            var body = new StringBuilder();
            int n = 1 + rng.Next(12);
            for (int l = 0; l < n; l++)
            {
                body.Append(rng.Next(3) == 0 ? Object(Message(new[] { "gnss", "wheel", "imu" }[rng.Next(3)])) : lines[rng.Next(lines.Length)]);
                body.Append(rng.Next(4) == 0 ? "\r\n" : "\n");
            }

            yield return Post("ndjson " + i, Utf8(body.ToString()), Nd);
        }
    }

    private IEnumerable<HostileRequest> Nmea(int count)
    {
        string path = "/v1/vehicles/" + Vehicle + "-nmea/nmea";
        string day = now.ToString("ddMMyy", CultureInfo.InvariantCulture);
        string hhmmss = now.AddMinutes(-3).ToString("HHmmss", CultureInfo.InvariantCulture);
        string gga = Sentence("GPGGA," + hhmmss + ".00,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,");

        // Item 6: an RMC with NaN speed or course and a valid checksum is judged per sentence; the answer is JSON.
        foreach (string speed in new[] { "NaN", "Infinity", "1e400" })
        {
            string rmc = Sentence("GPRMC," + hhmmss + ".00,A,4807.038,N,01131.000,E," + speed + ",084.4," + day + ",,,A");
            yield return new HostileRequest("nmea rmc speed " + speed, HostileTransport.Http, HttpMethod.Post, path, "text/plain", Utf8(gga + "\r\n" + rmc + "\r\n"), keys.Ingest)
            {
                Status = 200,
                CheckBody = body => Assert.Contains("\"speed\"", body, StringComparison.Ordinal),
            };
            string rmcCourse = Sentence("GPRMC," + hhmmss + ".00,A,4807.038,N,01131.000,E,010.0," + speed + "," + day + ",,,A");
            yield return new HostileRequest("nmea rmc course " + speed, HostileTransport.Http, HttpMethod.Post, path, "text/plain", Utf8(gga + "\r\n" + rmcCourse + "\r\n"), keys.Ingest)
            {
                Status = 200,
                CheckBody = body => Assert.Contains("\"course\"", body, StringComparison.Ordinal),
            };
        }

        string[] values = ["NaN", "Infinity", "-1", "1e308", "", "9999999999", "ä", "12:00", "0x1", ".", "00", "4807.038.1", "99", "A", "V", "N"];
        for (int i = 0; i < count; i++)
        {
            string[] fields = ("GPRMC," + hhmmss + ".00,A,4807.038,N,01131.000,E,010.0,084.4," + day + ",,,A").Split(',');
            string[] ggaFields = ("GPGGA," + hhmmss + ".00,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,").Split(',');
            var target = rng.Next(2) == 0 ? fields : ggaFields;
            target[1 + rng.Next(target.Length - 1)] = values[rng.Next(values.Length)];
            string body = Sentence(string.Join(",", ggaFields)) + "\r\n" + Sentence(string.Join(",", fields)) + "\r\n";
            switch (rng.Next(6))
            {
                case 0:
                    body = body.Replace('*', '#');
                    break;
                case 1:
                    body += "$GPGGA," + new string('9', 5000) + "*00\r\n";
                    break;
                case 2:
                    body = "\0\u0001garbage" + body;
                    break;
                default:
                    break;
            }

            yield return new HostileRequest("nmea " + i, HostileTransport.Http, HttpMethod.Post, path, "text/plain", Utf8(body), keys.Ingest);
        }

        yield return new HostileRequest("nmea json type", HostileTransport.Http, HttpMethod.Post, path, "application/json", Utf8(gga), keys.Ingest);
        yield return new HostileRequest("nmea empty", HostileTransport.Http, HttpMethod.Post, path, "text/plain", [], keys.Ingest) { Status = 400 };
        yield return new HostileRequest("nmea binary", HostileTransport.Http, HttpMethod.Post, path, "text/plain", [0xFF, 0x00, 0xFE, 0x0A, 0x80], keys.Ingest);
    }

    // NMEA 0183 checksum: XOR of the characters between '$' and '*'. A payload that is not ASCII (which NMEA does not
    // allow) gets the XOR of its UTF-8 bytes, so the checksum is not what rejects it.
    private static string Sentence(string payload) =>
        "$" + payload + "*" + (Ascii.IsValid(payload)
            ? NmeaChecksum.Compute(payload)
            : Encoding.UTF8.GetBytes(payload).Aggregate((byte)0, (x, b) => (byte)(x ^ b))).ToString("X2", CultureInfo.InvariantCulture);

    private IEnumerable<HostileRequest> Queries(int count)
    {
        string v = HostileInputRunTests.ValidVehicle;
        HostileRequest Get(string label, string path, string? auth = null, int? status = null) =>
            new(label, HostileTransport.Http, HttpMethod.Get, path, null, [], auth ?? keys.Read) { Status = status };

        // Item 6: explain?time= outside the representable range is a 400 naming the parameter.
        foreach (string time in new[] { "9999-12-31T23:59:59Z", "0001-01-01T00:00:00Z", "9999-12-31T23:59:59.9999999Z" })
        {
            yield return Get("explain time " + time, "/v1/vehicles/" + v + "/explain?time=" + time, status: 400) with
            {
                CheckBody = body => Assert.Contains("time:", body, StringComparison.Ordinal),
            };
        }

        string good = Uri.EscapeDataString(now.AddMinutes(-5).ToString("O", CultureInfo.InvariantCulture));
        string later = Uri.EscapeDataString(now.ToString("O", CultureInfo.InvariantCulture));
        string[] endpoints = ["explain?time={t}&window_s={w}", "diagnostics?from={t}&to={u}", "track?from={t}&to={u}&kind={k}&step={w}&format={f}",
            "distance?from={t}&to={u}", "state"];
        string[] windows = ["10", "0", "-1", "NaN", "Infinity", "1e308", "abc", "", "300.0000001", "5e-324"];
        string[] kinds = ["raw", "smoothed", "filtered", "", "RAW", "%00"];
        string[] formats = ["json", "csv", "gpx", "geojson", "xml", "", "../etc"];
        string[] vehicles = [v, "van-h", "no-such-van", "van-1%0A", "%00", "%FF", "%ED%A0%80", new string('v', 300), "..", "%2F", "a%20b", "%F0%9F%9A%9A"];
        for (int i = 0; i < count; i++)
        {
            string Pick(string[] from) => from[rng.Next(from.Length)];
            string t = rng.Next(3) == 0 ? good : Pick(BadQueryTimes);
            string u = rng.Next(3) == 0 ? later : Pick(BadQueryTimes);
            string query = Pick(endpoints).Replace("{t}", t).Replace("{u}", u).Replace("{w}", Pick(windows)).Replace("{k}", Pick(kinds)).Replace("{f}", Pick(formats));
            string vehicle = rng.Next(2) == 0 ? v : Pick(vehicles);
            yield return Get("query " + i, "/v1/vehicles/" + vehicle + "/" + query);
        }

        string[] alertQueries = ["from={t}", "to={t}", "from={t}&to={t}", "kind=x", "limit=0", "limit=-1", "limit=1e9", "limit=abc", "state=x", "vehicle=%00"];
        for (int i = 0; i < 200; i++)
        {
            string q = alertQueries[rng.Next(alertQueries.Length)].Replace("{t}", BadQueryTimes[rng.Next(BadQueryTimes.Length)]);
            yield return Get("alerts " + i, "/v1/alerts?" + q);
        }

        // The base layer's two parameters (issue 15): fixed lists, so the seeded draws above stay as they were.
        foreach (string days in new[] { "0", "-1", "32", "1.5", "abc", "%00", "1e9", "%ED%A0%80", new string('9', 400) })
        {
            yield return Get("base-layer days " + days[..Math.Min(12, days.Length)], "/v1/base-layer?days=" + days, status: 400) with
            {
                CheckBody = body => Assert.Contains("days:", body, StringComparison.Ordinal),
            };
        }

        foreach (string cell in new[] { "4.9", "101", "NaN", "Infinity", "-10", "abc", "%00" })
        {
            yield return Get("base-layer cell_m " + cell, "/v1/base-layer?cell_m=" + cell, status: 400) with
            {
                CheckBody = body => Assert.Contains("cell_m:", body, StringComparison.Ordinal),
            };
        }

        foreach (string bbox in new[] { "x", "1,2,3", "NaN,NaN,NaN,NaN", "1e400,0,0,0", "-181,-91,181,91", "" })
        {
            yield return Get("vehicles bbox " + bbox, "/v1/vehicles?bbox=" + bbox);
        }

        // Issue 15: the fleet list's filters and paging, the alert list's sort and cursor; each a 400 naming the parameter.
        foreach (string q in new[] { "status=x", "status=", "status=moving,,x", "open_alerts=1", "silent_after_s=1e400", "silent_after_s=-5", "after=%00", "limit=0", "limit=abc" })
        {
            string name = q[..q.IndexOf('=', StringComparison.Ordinal)];
            yield return Get("vehicles " + q, "/v1/vehicles?" + q, status: 400) with
            {
                CheckBody = body => Assert.Contains(name + ":", body, StringComparison.Ordinal),
            };
        }

        foreach (string q in new[] { "sort=x", "cursor=x", "cursor=%00", "cursor=" + new string('A', 300) })
        {
            string name = q[..q.IndexOf('=', StringComparison.Ordinal)];
            yield return Get("alerts " + q[..Math.Min(q.Length, 20)], "/v1/alerts?" + q, status: 400) with
            {
                CheckBody = body => Assert.Contains(name + ":", body, StringComparison.Ordinal),
            };
        }
    }

    // Foreign and malformed keys on every kind of endpoint.
    private IEnumerable<HostileRequest> Keys()
    {
        string[] headers = ["", "Bearer", "Bearer ", "bearer " + keys.IngestSecret, "BEARER " + keys.IngestSecret, "Bearer  " + keys.IngestSecret, "Basic dXNlcjpwYXNz",
            "Bearer " + new string('k', 8000), "Bearer fsk_" + new string('0', 40), "Bearer \"" + keys.IngestSecret + "\"", "Bearer " + keys.IngestSecret + "x",
            keys.Read, keys.OtherFleetIngest, "Token " + keys.IngestSecret, "Bearer %00", "Bearer ../../etc/passwd"];
        string[] paths = ["/v1/telemetry", "/v1/vehicles", "/v1/alerts", "/v1/vehicles/" + HostileInputRunTests.ValidVehicle + "/state", "/v1/webhooks"];
        foreach (string header in headers)
        {
            foreach (string path in paths)
            {
                var method = path == "/v1/telemetry" ? HttpMethod.Post : HttpMethod.Get;
                byte[] body = method == HttpMethod.Post ? Utf8("[" + Object(Message("wheel")) + "]") : [];
                yield return new HostileRequest("key " + header[..Math.Min(20, header.Length)] + " " + path, HostileTransport.Http, method, path, method == HttpMethod.Post ? "application/json" : null, body, header);
            }
        }
    }

    // Malformed bodies and ids on the key and quota endpoints (issue 14). Never a valid quota or an existing key id: the
    // run's own keys must keep working and its vehicles keep being admitted.
    private IEnumerable<HostileRequest> FleetAdministration()
    {
        string[] keyBodies = ["", "{", "[]", "null", "{\"role\":1}", "{\"role\":\"root\"}", "{\"role\":\"read\",\"expires_at\":\"9999-12-31T23:59:59Z\"}",
            "{\"role\":\"read\",\"expires_at\":\"0001-01-01T00:00:00Z\"}", "{\"role\":\"read\",\"expires_at\":1e308}", "{\"role\":\"read\",\"expires_at\":\"NaN\"}",
            "{\"role\":\"read\",\"label\":\"" + new string('l', 300) + "\"}", "{\"role\":\"read\",\"label\":\"\\ud800\"}", "{\"role\":\"\\u0000\"}",
            "{\"role\":\"read\",\"extra\":{}}", new string('[', 5000) + new string(']', 5000)];
        foreach (string body in keyBodies)
        {
            yield return new HostileRequest("keys create " + body[..Math.Min(body.Length, 30)], HostileTransport.Http, HttpMethod.Post, "/v1/keys", "application/json", Utf8(body), keys.Admin);
        }

        string[] ids = ["x", "%00", "..", "00000000-0000-0000-0000-000000000000", Guid.NewGuid().ToString(), new string('f', 300), "%ED%A0%80", "01a2418c-ba44-7f85-ad79-775bc062760"];
        string[] rotateBodies = ["", "{\"grace_s\":-1}", "{\"grace_s\":1e9}", "{\"grace_s\":\"x\"}", "{\"grace\":1}", "[1]", "{"];
        foreach (string id in ids)
        {
            yield return new HostileRequest("keys revoke " + id[..Math.Min(id.Length, 20)], HostileTransport.Http, HttpMethod.Post, "/v1/keys/" + id + "/revoke", null, [], keys.Admin);
            foreach (string body in rotateBodies)
            {
                yield return new HostileRequest("keys rotate " + id[..Math.Min(id.Length, 20)] + " " + body, HostileTransport.Http, HttpMethod.Post, "/v1/keys/" + id + "/rotate", "application/json", Utf8(body), keys.Admin);
            }
        }

        string[] quotaBodies = ["", "{", "[]", "{}", "{\"max_vehicles\":0}", "{\"max_vehicles\":-1}", "{\"max_vehicles\":1e10}", "{\"max_vehicles\":1.5}",
            "{\"max_vehicles\":\"5\"}", "{\"max_vehicles\":true}", "{\"max_vehicles\":NaN}", "{\"max_vehicles\":99999999999999999999}", "{\"quota\":5}"];
        foreach (string body in quotaBodies)
        {
            yield return new HostileRequest("quota " + body, HostileTransport.Http, HttpMethod.Put, "/v1/fleet/quota", "application/json", Utf8(body), keys.Admin) { Status = 400 };
            yield return new HostileRequest("quota by a read key " + body, HostileTransport.Http, HttpMethod.Put, "/v1/fleet/quota", "application/json", Utf8(body), keys.Read) { Status = 403 };
        }

        yield return new HostileRequest("keys list by an ingest key", HostileTransport.Http, HttpMethod.Get, "/v1/keys", null, [], keys.Ingest) { Status = 403 };
    }

    // Item 6 bodies that HttpClient will not send, and oversized bodies.
    private IEnumerable<HostileRequest> RawBodies()
    {
        string auth = "Authorization: " + keys.Ingest + "\r\n";
        string head = "POST /v1/telemetry HTTP/1.1\r\nHost: localhost\r\n" + auth + "Content-Type: application/json\r\n";
        byte[] wheel = Utf8("[" + Object(Message("wheel")) + "]");

        // A chunked 50 MB body without Content-Length: 413 (the connection may close before all is sent).
        var chunk = new byte[1 << 20];
        Array.Fill(chunk, (byte)' ');
        var chunked = new List<byte>(52 << 20);
        for (int i = 0; i < 50; i++)
        {
            chunked.AddRange(Utf8("100000\r\n"));
            chunked.AddRange(chunk);
            chunked.AddRange(Utf8("\r\n"));
        }

        chunked.AddRange(Utf8("0\r\n\r\n"));
        yield return new HostileRequest("chunked 50 MB", HostileTransport.Raw, HttpMethod.Post, "/v1/telemetry", null, [.. chunked], null)
        {
            RawHead = head + "Transfer-Encoding: chunked\r\n\r\n",
            Status = 413,
            MayDrop = true,
        };
        string nmeaHead = "POST /v1/vehicles/" + Vehicle + "/nmea HTTP/1.1\r\nHost: localhost\r\n" + auth + "Content-Type: text/plain\r\n";
        yield return new HostileRequest("nmea chunked 50 MB", HostileTransport.Raw, HttpMethod.Post, "/nmea", null, [.. chunked], null)
        {
            RawHead = nmeaHead + "Transfer-Encoding: chunked\r\n\r\n",
            Status = 413,
            MayDrop = true,
        };

        // A body shorter than its Content-Length: 408 once Kestrel's minimum body data rate (240 B/s after a 5 s grace
        // period, its default) gives up on the rest.
        yield return new HostileRequest("short body", HostileTransport.Raw, HttpMethod.Post, "/v1/telemetry", null, wheel, null)
        {
            RawHead = head + "Content-Length: " + (wheel.Length + 100).ToString(CultureInfo.InvariantCulture) + "\r\n\r\n",
            Status = 408,
        };
        yield return new HostileRequest("nmea short body", HostileTransport.Raw, HttpMethod.Post, "/nmea", null, Utf8("$GPGGA"), null)
        {
            RawHead = nmeaHead + "Content-Length: 500\r\n\r\n",
            Status = 408,
        };

        // The same, then the client closes its sending side: Kestrel may take that for a disconnect; an answer, if
        // any, must not be 5xx.
        yield return new HostileRequest("short body, half-closed", HostileTransport.Raw, HttpMethod.Post, "/v1/telemetry", null, wheel, null)
        {
            RawHead = head + "Content-Length: " + (wheel.Length + 100).ToString(CultureInfo.InvariantCulture) + "\r\n\r\n",
            HalfClose = true,
            MayDrop = true,
        };

        // Invalid chunk sizes: 400.
        foreach (string size in new[] { "zz", "-1", "FFFFFFFFFFFFFFFFFF", "1;", " " })
        {
            yield return new HostileRequest("chunk size " + size, HostileTransport.Raw, HttpMethod.Post, "/v1/telemetry", null, Utf8(size + "\r\n" + "[]" + "\r\n0\r\n\r\n"), null)
            {
                RawHead = head + "Transfer-Encoding: chunked\r\n\r\n",
                Status = 400,
            };
        }

        // A declared Content-Length over the limit: 413 before the body is read.
        yield return new HostileRequest("declared 5 MB", HostileTransport.Raw, HttpMethod.Post, "/v1/telemetry", null, [], null)
        {
            RawHead = head + "Content-Length: 5242880\r\n\r\n",
            HalfClose = true,
            Status = 413,
            MayDrop = true,
        };

        // A 5 MB JSON body through HttpClient: 413.
        var big = new StringBuilder("[");
        while (big.Length < (5 << 20))
        {
            big.Append(Object(Message("wheel"))).Append(',');
        }

        big.Length--;
        yield return Post("json 5 MB", Utf8(big.Append(']').ToString())) with { Status = 413, MayDrop = true };

        // A key that is not ASCII, which HttpClient will not send.
        yield return new HostileRequest("non-ASCII key", HostileTransport.Raw, HttpMethod.Post, "/v1/telemetry", null, wheel, null)
        {
            RawHead = "POST /v1/telemetry HTTP/1.1\r\nHost: localhost\r\nAuthorization: Bearer ключ\r\nContent-Type: application/json\r\nContent-Length: "
                + wheel.Length.ToString(CultureInfo.InvariantCulture) + "\r\n\r\n",
        };
    }
}
