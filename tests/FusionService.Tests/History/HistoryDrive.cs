// An invented delivery round ingested through the API, with its truth, for the history tests.
using System.Text.Json;
using System.Text.Json.Nodes;
using FusionService.Estimation.Models;
using FusionService.Scenarios;
using FusionService.Tests.Infrastructure;
using FusionService.Tracking;

namespace FusionService.Tests.History;

/// <summary>
/// A short delivery round of the invented demo town (<see cref="DeliveryNetwork"/>, 4 stops of 20-40 s) driven from
/// <see cref="StartUs"/> (40 min ago, whole seconds), its sensor stream (default delivery-van suite, 1 % GNSS jumps)
/// and the API messages made of it. All values are invented demo data; the truth is known.
/// </summary>
internal sealed class HistoryDrive
{
    private HistoryDrive(ScenarioRun run, TelemetryDrive drive, long startUs)
    {
        Run = run;
        Drive = drive;
        StartUs = startUs;
    }

    public ScenarioRun Run { get; }

    public TelemetryDrive Drive { get; }

    public long StartUs { get; }

    public long EndUs => Run.Truth.EndTimeUs;

    public static HistoryDrive Create(string vehicle, int seed)
    {
        long startUs = TelemetryDrive.StartUs(TimeSpan.FromMinutes(40));
        TruthTrajectory truth = new DeliveryNetwork().PlanRound(3, stopCount: 4, seed: seed, minDwellS: 20, maxDwellS: 40)
            .Drive(new RouteDriverOptions { StartTimeUs = startUs });
        var suite = SensorSuite.ForProfile(NoiseProfile.DeliveryVan) with { OutlierProbability = 0.01 };
        ScenarioRun run = MeasurementGenerator.Generate(truth, suite, seed + 1);
        return new HistoryDrive(run, TelemetryDrive.FromRun(vehicle, run), startUs);
    }

    /// <summary>
    /// Ingests the messages <paramref name="include"/> selects, in time order, in batches, into <paramref name="host"/>
    /// (default: the shared one), then flushes its writers.
    /// </summary>
    public async Task IngestAsync(ServiceFixture fixture, TestFleet fleet, Func<int, bool>? include = null, ServiceFactory? host = null)
    {
        using var client = fixture.Client(fleet.IngestKey, host);
        var batch = new JsonArray();
        for (int i = 0; i < Drive.Messages.Count; i++)
        {
            if (include is null || include(i))
            {
                batch.Add(Drive.Messages[i].Message.DeepClone());
            }

            if (batch.Count == 500 || (i == Drive.Messages.Count - 1 && batch.Count > 0))
            {
                await client.IngestOkAsync(batch.ToJsonString());
                batch = [];
            }
        }

        await (host ?? fixture.Host).Services.GetRequiredService<TrackWriteQueue>().FlushAsync(CancellationToken.None);
    }

    /// <summary>Horizontal distance from a lat/lon to the truth at <paramref name="timeUs"/>, metres.</summary>
    public double ErrorM(long timeUs, double latDeg, double lonDeg)
    {
        var truth = Run.TrueStateAt(timeUs);
        Run.Truth.ToLocalM(latDeg, lonDeg, out double e, out double n);
        return Math.Sqrt(Math.Pow(e - truth[0], 2) + Math.Pow(n - truth[1], 2));
    }

    /// <summary>Path length of the truth over [from, to), metres (sum over its samples).</summary>
    public double TrueDistanceM(long fromUs, long toUs)
    {
        double distance = 0;
        TruthSample? previous = null;
        foreach (var s in Run.Truth.Samples)
        {
            if (s.TimeUs < fromUs || s.TimeUs >= toUs)
            {
                continue;
            }

            if (previous is { } p)
            {
                distance += Math.Sqrt(Math.Pow(s.EastM - p.EastM, 2) + Math.Pow(s.NorthM - p.NorthM, 2));
            }

            previous = s;
        }

        return distance;
    }

    public static string Time(long timeUs) => DateTimeOffset.UnixEpoch.AddTicks(timeUs * 10).ToString("yyyy-MM-dd'T'HH:mm:ss.ffffff'Z'", System.Globalization.CultureInfo.InvariantCulture);

    public static async Task<JsonElement> TrackJsonAsync(HttpClient client, string vehicle, long fromUs, long toUs, string kind, string extra = "")
    {
        using var response = await client.GetAsync($"/v1/vehicles/{vehicle}/track?from={Time(fromUs)}&to={Time(toUs)}&kind={kind}{extra}");
        string text = await response.Content.ReadAsStringAsync();
        Assert.True(response.IsSuccessStatusCode, $"{(int)response.StatusCode}: {text}");
        return JsonDocument.Parse(text).RootElement.Clone();
    }

    public static async Task<JsonElement> DistanceAsync(HttpClient client, string vehicle, long fromUs, long toUs)
    {
        using var response = await client.GetAsync($"/v1/vehicles/{vehicle}/distance?from={Time(fromUs)}&to={Time(toUs)}");
        string text = await response.Content.ReadAsStringAsync();
        Assert.True(response.IsSuccessStatusCode, $"{(int)response.StatusCode}: {text}");
        return JsonDocument.Parse(text).RootElement.Clone();
    }
}
