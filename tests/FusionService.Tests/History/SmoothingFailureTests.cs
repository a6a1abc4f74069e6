// A smoothed track whose replay fails answers with an error instead of waiting for ever.
using System.Net;
using FusionService.Estimation.Measurements;
using FusionService.Ingest;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.History;

[Collection(ServiceTests.Name)]
public sealed class SmoothingFailureTests(ServiceFixture fixture)
{
    /// <summary>
    /// The read hands rows to the replay through a few reused chunk arrays, so a replay that stops early returns no more
    /// of them: the read must then stop too. A wheel speed stored as NaN (never accepted by ingest; written straight into
    /// the store here) makes the filter refuse its update 30 s into 110,000 rows, far more than the arrays in flight hold.
    /// </summary>
    [Fact]
    public async Task A_replay_that_fails_early_in_a_long_window_ends_the_request_with_a_server_error()
    {
        var fleet = await fixture.NewFleetAsync();
        const string Vehicle = "van-nan";
        long startUs = TelemetryDrive.StartUs(TimeSpan.FromHours(3));
        var measurements = new List<Measurement>();
        ulong key = 1;
        for (int tenth = 0; tenth < 100_000; tenth++)
        {
            long timeUs = startUs + (tenth * 100_000L);
            if (tenth % 10 == 0)
            {
                // Standing at an invented yard, 3 m fixes once a second.
                measurements.Add(Measurement.GnssPosition(timeUs, key++, 47.0, 8.0, 3.0));
            }

            measurements.Add(Measurement.WheelSpeed(timeUs, key++, 0.0));
        }

        var rows = measurements.Select(m => IngestPipeline.ToRow(fleet.Id, Vehicle, m, DateTime.UtcNow)).ToList();
        int poisoned = rows.FindIndex(r => r.Kind == (short)SensorKind.WheelSpeed && r.TimeUs >= startUs + 30_000_000);
        rows[poisoned] = rows[poisoned] with { V0 = double.NaN };
        await fixture.StoreWithoutTrackAsync(rows);

        using var client = fixture.Client(fleet.ReadKey);
        client.Timeout = TimeSpan.FromSeconds(60);
        string window = "from=" + HistoryDrive.Time(startUs) + "&to=" + HistoryDrive.Time(startUs + 10_001_000_000L);
        using var response = await client.GetAsync($"/v1/vehicles/{Vehicle}/track?kind=smoothed&{window}");

        Assert.Equal(HttpStatusCode.InternalServerError, response.StatusCode);
    }
}
