// Invented scenario measurements as API messages, with the core measurements the service must make of them.
using System.Globalization;
using System.Text.Json.Nodes;
using FusionService.Estimation.Measurements;
using FusionService.Ingest;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Audit;

/// <summary>
/// Turns scenario measurements (invented demo data) into telemetry messages with ids, pairing a GNSS position with the
/// velocity of the same instant as one gnss message, and keeps the core measurements each message becomes.
/// </summary>
internal static class ScenarioTelemetry
{
    private const double DegToRad = Math.PI / 180.0;

    /// <summary>Messages in time order; <paramref name="statedAccuracyFactor"/> scales the stated GNSS accuracy (1 = truthful).</summary>
    public static List<(JsonObject Message, Measurement[] Core)> Messages(string vehicle, IReadOnlyList<Measurement> all, double statedAccuracyFactor = 1.0)
    {
        var list = new List<(JsonObject, Measurement[])>();
        for (int i = 0; i < all.Count; i++)
        {
            var m = all[i];
            long t = m.TimeUs;
            string stamp = t.ToString(CultureInfo.InvariantCulture);
            switch (m.Kind)
            {
                case SensorKind.GnssPosition:
                {
                    string id = "g-" + stamp;
                    ulong key = MessageKeys.FromId(id);
                    double accuracy = m.Value2 * statedAccuracyFactor;
                    var message = new JsonObject
                    {
                        ["vehicle"] = vehicle,
                        ["kind"] = "gnss",
                        ["time"] = Rfc3339(t),
                        ["id"] = id,
                        ["lat_deg"] = m.Value0,
                        ["lon_deg"] = m.Value1,
                        ["accuracy_m"] = accuracy,
                    };
                    var core = new List<Measurement> { Measurement.GnssPosition(t, key, m.Value0, m.Value1, accuracy) };
                    if (i + 1 < all.Count && all[i + 1].Kind == SensorKind.GnssVelocity && all[i + 1].TimeUs == t)
                    {
                        var v = all[++i];
                        message["speed_mps"] = v.Value0;
                        message["speed_accuracy_mps"] = (double)v.Value2;
                        double courseRad = double.NaN;
                        if (!double.IsNaN(v.Value1))
                        {
                            double courseDeg = v.Value1 / DegToRad;
                            courseDeg = courseDeg >= 360 ? 0 : courseDeg < 0 ? courseDeg + 360 : courseDeg;
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
                    string id = "w-" + stamp;
                    list.Add((new JsonObject { ["vehicle"] = vehicle, ["kind"] = "wheel", ["time"] = Rfc3339(t), ["id"] = id, ["speed_mps"] = m.Value0 },
                        [Measurement.WheelSpeed(t, MessageKeys.FromId(id), m.Value0)]));
                    break;
                }

                case SensorKind.Imu:
                {
                    string id = "i-" + stamp;
                    double dps = m.Value0 / DegToRad;
                    var message = new JsonObject { ["vehicle"] = vehicle, ["kind"] = "imu", ["time"] = Rfc3339(t), ["id"] = id, ["yaw_rate_dps"] = dps };
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

        return list;
    }

    /// <summary>RFC 3339 UTC with microseconds.</summary>
    public static string Rfc3339(long timeUs) =>
        DateTimeOffset.UnixEpoch.AddTicks(timeUs * 10).ToString("yyyy-MM-dd'T'HH:mm:ss.ffffff'Z'", CultureInfo.InvariantCulture);

    /// <summary>Sends <paramref name="messages"/> in requests of at most <see cref="ServiceFactory.MaxMessages"/> and waits for the tracks' writes.</summary>
    public static async Task IngestAsync(ServiceFixture fixture, HttpClient client, IEnumerable<JsonObject> messages)
    {
        foreach (var chunk in messages.Chunk(ServiceFactory.MaxMessages))
        {
            await client.IngestOkAsync(new JsonArray([.. chunk.Select(m => (JsonNode)m.DeepClone())]).ToJsonString());
        }

        await fixture.Host.Services.GetRequiredService<FusionService.Tracking.TrackWriteQueue>().FlushAsync(CancellationToken.None);
    }
}
