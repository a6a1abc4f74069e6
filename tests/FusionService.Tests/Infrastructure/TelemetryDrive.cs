// Invented telemetry of one van from the seeded scenario generators, as API messages and as core measurements.
using System.Globalization;
using System.Text.Json.Nodes;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Ingest;
using FusionService.Scenarios;

namespace FusionService.Tests.Infrastructure;

/// <summary>
/// A seeded drive (invented demo data: <see cref="RouteDriver"/> + <see cref="MeasurementGenerator"/>) turned into
/// API messages, each with the core measurements the service must make of it (computed here the way the API
/// documents: degrees times pi/180, message keys from ids).
/// </summary>
internal sealed class TelemetryDrive
{
    private const double DegToRad = Math.PI / 180.0;

    private TelemetryDrive(List<(JsonObject Message, Measurement[] Core)> messages) => Messages = messages;

    /// <summary>Messages in time order with their core measurements.</summary>
    public IReadOnlyList<(JsonObject Message, Measurement[] Core)> Messages { get; }

    /// <summary>A drive of about a minute and a half starting at <paramref name="startUs"/> (a whole second).</summary>
    public static TelemetryDrive Create(string vehicle, long startUs, int seed)
    {
        var truth = RouteDriver.Drive(
            [new RouteWaypoint(0, 0), new RouteWaypoint(220, 0), new RouteWaypoint(220, 160), new RouteWaypoint(440, 160), new RouteWaypoint(440, 320)],
            new RouteDriverOptions { StartTimeUs = startUs },
            seed);
        var run = MeasurementGenerator.Generate(truth, SensorSuite.ForProfile(NoiseProfile.DeliveryVan), seed);
        return FromRun(vehicle, run);
    }

    /// <summary>The messages of a generated scenario run (GNSS velocity merged into the fix at the same instant).</summary>
    public static TelemetryDrive FromRun(string vehicle, ScenarioRun run)
    {
        var list = new List<(JsonObject, Measurement[])>();
        var all = run.Measurements;
        for (int i = 0; i < all.Count; i++)
        {
            var m = all[i];
            long t = m.TimeUs;
            switch (m.Kind)
            {
                case SensorKind.GnssPosition:
                {
                    string id = "g-" + t.ToString(CultureInfo.InvariantCulture);
                    ulong key = MessageKeys.FromId(id);
                    var message = new JsonObject
                    {
                        ["vehicle"] = vehicle,
                        ["kind"] = "gnss",
                        ["time"] = DateTimeOffset.UnixEpoch.AddTicks(t * 10).ToString("yyyy-MM-dd'T'HH:mm:ss.ffffff'Z'", CultureInfo.InvariantCulture),
                        ["id"] = id,
                        ["lat_deg"] = m.Value0,
                        ["lon_deg"] = m.Value1,
                        ["accuracy_m"] = (double)m.Value2,
                    };
                    var core = new List<Measurement> { Measurement.GnssPosition(t, key, m.Value0, m.Value1, m.Value2) };
                    if (i + 1 < all.Count && all[i + 1].Kind == SensorKind.GnssVelocity && all[i + 1].TimeUs == t)
                    {
                        var v = all[++i];
                        message["speed_mps"] = v.Value0;
                        message["speed_accuracy_mps"] = (double)v.Value2;
                        double courseRad = double.NaN;
                        if (!double.IsNaN(v.Value1))
                        {
                            double courseDeg = v.Value1 / DegToRad;
                            if (courseDeg >= 360)
                            {
                                courseDeg = 0;
                            }

                            message["course_deg"] = courseDeg;
                            courseRad = courseDeg * DegToRad;
                        }

                        core.Add(Measurement.GnssVelocity(t, key, v.Value0, courseRad, v.Value2));
                    }

                    list.Add((message, [.. core]));
                    break;
                }

                case SensorKind.WheelSpeed:
                {
                    string id = "w-" + t.ToString(CultureInfo.InvariantCulture);
                    list.Add((new JsonObject
                    {
                        ["vehicle"] = vehicle,
                        ["kind"] = "wheel",
                        ["time"] = t / 1000,
                        ["id"] = id,
                        ["speed_mps"] = m.Value0,
                    }, [Measurement.WheelSpeed(t, MessageKeys.FromId(id), m.Value0)]));
                    break;
                }

                case SensorKind.Imu:
                {
                    string id = "i-" + t.ToString(CultureInfo.InvariantCulture);
                    double dps = m.Value0 / DegToRad;
                    var message = new JsonObject
                    {
                        ["vehicle"] = vehicle,
                        ["kind"] = "imu",
                        ["time"] = t / 1000,
                        ["id"] = id,
                        ["yaw_rate_dps"] = dps,
                    };
                    if (!double.IsNaN(m.Value1))
                    {
                        message["accel_mps2"] = m.Value1;
                    }

                    list.Add((message, [Measurement.Imu(t, MessageKeys.FromId(id), dps * DegToRad, m.Value1)]));
                    break;
                }

                default:
                    break;
            }
        }

        return new TelemetryDrive(list);
    }

    /// <summary>Whole seconds of "now minus <paramref name="ago"/>", Unix microseconds.</summary>
    public static long StartUs(TimeSpan ago) =>
        (DateTimeOffset.UtcNow - ago).ToUnixTimeSeconds() * 1_000_000;

    /// <summary>Messages [from, to) as a JSON array body.</summary>
    public string Body(int from, int to) => new JsonArray([.. Messages.Skip(from).Take(to - from).Select(m => (JsonNode)m.Message.DeepClone())]).ToJsonString();
}
