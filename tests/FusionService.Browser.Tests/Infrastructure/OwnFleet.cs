// A fleet a test creates for itself, with a read and an ingest key, and the posting of invented drives to it.
using System.Net.Http.Headers;
using System.Text.Json;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Scenarios;
using FusionService.Simulator.Messages;

namespace FusionService.Browser.Tests.Infrastructure;

/// <summary>A fleet of a test's own on the fixture's service.</summary>
public sealed class OwnFleet(Uri baseAddress, string readKey, string ingestKey)
{
    /// <summary>Its read key.</summary>
    public string ReadKey { get; } = readKey;

    /// <summary>One invented delivery round of the demo town (van 3, <paramref name="stops"/> stops, fixed seeds), with the
    /// truth it was measured from. Invented demo data.</summary>
    public static (TruthTrajectory Truth, IReadOnlyList<Measurement> Measurements) Round(int stops, int seed)
    {
        var truth = new DeliveryNetwork().PlanRound(vanIndex: 3, stopCount: stops, seed: seed).Drive(new RouteDriverOptions());
        var suite = SensorSuite.ForProfile(NoiseProfile.DeliveryVan);
        return (truth, MeasurementGenerator.Generate(truth, suite, seed: seed + 1).Measurements);
    }

    /// <summary>The measurements moved in time by <paramref name="shiftUs"/>.</summary>
    public static List<Measurement> Shift(IEnumerable<Measurement> measurements, long shiftUs) =>
        [.. measurements.Select(m => Measurement.FromStored(m.TimeUs + shiftUs, m.OrderKey, m.Value0, m.Value1, m.Value2))];

    /// <summary>Posts measurements of one vehicle to <c>/v1/telemetry</c> as NDJSON, in batches.</summary>
    public async Task PostAsync(string vehicle, IReadOnlyList<Measurement> measurements, int batch = 4000)
    {
        using var http = Client(ingestKey);
        var messages = TelemetryMessages.FromMeasurements(vehicle, measurements);
        for (int i = 0; i < messages.Count; i += batch)
        {
            using var content = new ByteArrayContent(TelemetryJson.ToNdjson(messages.Skip(i).Take(batch)));
            content.Headers.ContentType = new MediaTypeHeaderValue(TelemetryJson.NdjsonContentType);
            using var response = await http.PostAsync(new Uri("v1/telemetry", UriKind.Relative), content);
            string body = await response.Content.ReadAsStringAsync();
            Assert.True(response.IsSuccessStatusCode, $"posting telemetry: HTTP {(int)response.StatusCode} {body}");
        }
    }

    /// <summary>GETs a JSON document with the read key.</summary>
    public async Task<JsonDocument> GetAsync(string path)
    {
        using var http = Client(ReadKey);
        using var response = await http.GetAsync(new Uri(path, UriKind.Relative));
        string body = await response.Content.ReadAsStringAsync();
        Assert.True(response.IsSuccessStatusCode, $"GET {path}: HTTP {(int)response.StatusCode} {body}");
        return JsonDocument.Parse(body);
    }

    /// <summary>Waits until the vehicle's newest stored estimate is at or after <paramref name="timeUs"/> (the tracks have
    /// processed what was posted).</summary>
    public async Task WaitForEstimateAsync(string vehicle, long timeUs, TimeSpan timeout)
    {
        var deadline = DateTime.UtcNow + timeout;
        while (true)
        {
            using (var list = await GetAsync("v1/vehicles"))
            {
                foreach (var v in list.RootElement.GetProperty("vehicles").EnumerateArray())
                {
                    if (v.GetProperty("vehicle").GetString() == vehicle
                        && v.GetProperty("time").GetDateTimeOffset().ToUnixTimeMilliseconds() * 1000 >= timeUs - 1_000_000)
                    {
                        return;
                    }
                }
            }

            if (DateTime.UtcNow > deadline)
            {
                throw new Xunit.Sdk.XunitException($"{vehicle}: no estimate at {timeUs} us within {timeout.TotalSeconds:0} s");
            }

            await Task.Delay(500);
        }
    }

    private HttpClient Client(string key)
    {
        var http = new HttpClient { BaseAddress = baseAddress, Timeout = TimeSpan.FromMinutes(2) };
        http.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", key);
        return http;
    }
}
