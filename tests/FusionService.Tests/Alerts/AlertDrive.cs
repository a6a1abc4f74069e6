// A seeded drive with three GNSS fixes jumped 90 m north, and helpers to wait for alerts.
using System.Globalization;
using System.Net.Http.Json;
using System.Text.Json;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Alerts;

/// <summary>Telemetry that makes the track gate three fixes within 7 s (invented demo data from <see cref="TelemetryDrive"/>).</summary>
internal static class AlertDrive
{
    /// <summary>GNSS message indices (among the GNSS messages) that are jumped: about 45-52 s into the drive.</summary>
    public static readonly int[] JumpedFixes = [45, 48, 52];

    public static TelemetryDrive WithJumps(string vehicle, int seed)
    {
        var drive = TelemetryDrive.Create(vehicle, TelemetryDrive.StartUs(TimeSpan.FromMinutes(10)), seed);
        var fixes = drive.Messages.Where(m => (string?)m.Message["kind"] == "gnss").ToList();
        foreach (int i in JumpedFixes)
        {
            var message = fixes[i].Message;
            message["lat_deg"] = message["lat_deg"]!.GetValue<double>() + (90.0 / 111_132.0);
        }

        return drive;
    }

    public static async Task IngestAsync(HttpClient client, TelemetryDrive drive, int from = 0, int to = int.MaxValue, int batch = 100)
    {
        to = Math.Min(to, drive.Messages.Count);
        for (int i = from; i < to; i += batch)
        {
            await client.IngestOkAsync(drive.Body(i, Math.Min(i + batch, to)));
        }
    }

    /// <summary>Polls GET /v1/alerts with <paramref name="query"/> until at least <paramref name="count"/> alerts are listed (30 s at most).</summary>
    public static async Task<JsonElement[]> WaitForAlertsAsync(HttpClient client, string query, int count = 1)
    {
        var deadline = DateTime.UtcNow.AddSeconds(30);
        while (true)
        {
            var body = await client.GetFromJsonAsync<JsonElement>("/v1/alerts?" + query);
            var alerts = body.GetProperty("alerts").EnumerateArray().ToArray();
            if (alerts.Length >= count || DateTime.UtcNow > deadline)
            {
                Assert.True(alerts.Length >= count, string.Create(CultureInfo.InvariantCulture, $"expected {count} alerts for '{query}', got {alerts.Length}"));
                return alerts;
            }

            await Task.Delay(200);
        }
    }
}
