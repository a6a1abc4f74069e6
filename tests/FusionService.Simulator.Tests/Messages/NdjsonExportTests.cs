using System.Text;
using System.Text.Json;
using FusionService.Estimation.Measurements;
using FusionService.Simulator.Export;
using FusionService.Simulator.Fleet;
using FusionService.Simulator.Messages;

namespace FusionService.Simulator.Tests.Messages;

/// <summary>NDJSON export: reproducible bytes, one message per line in arrival order, duplicates only from retries.</summary>
public sealed class NdjsonExportTests : IDisposable
{
    private static readonly DemoFleetOptions Small = new() { VanCount = 8, StopsPerVan = 3 };
    private readonly string _root = Path.Combine(Path.GetTempPath(), "simulator-tests-" + Guid.NewGuid().ToString("N"));

    public void Dispose() => Directory.Delete(_root, recursive: true);

    [Fact]
    public async Task Same_seed_gives_identical_bytes_and_another_seed_does_not()
    {
        IReadOnlyList<string> first = await NdjsonExporter.WriteAsync(new DemoFleet(Small), Path.Combine(_root, "a"));
        IReadOnlyList<string> second = await NdjsonExporter.WriteAsync(new DemoFleet(Small), Path.Combine(_root, "b"));
        IReadOnlyList<string> other = await NdjsonExporter.WriteAsync(new DemoFleet(Small with { Seed = 7 }), Path.Combine(_root, "c"));
        Assert.Equal(8, first.Count);
        Assert.Equal(first.Select(Path.GetFileName), ["van-01.ndjson", "van-02.ndjson", "van-03.ndjson", "van-04.ndjson", "van-05.ndjson", "van-06.ndjson", "van-07.ndjson", "van-08.ndjson"]);
        for (int i = 0; i < first.Count; i++)
        {
            byte[] a = await File.ReadAllBytesAsync(first[i]);
            Assert.True(a.Length > 100_000, $"{first[i]} has only {a.Length} bytes");
            Assert.Equal(a, await File.ReadAllBytesAsync(second[i]));
            Assert.NotEqual(a, await File.ReadAllBytesAsync(other[i]));
        }
    }

    [Fact]
    public async Task Files_hold_every_message_once_per_sending_in_arrival_order()
    {
        var fleet = new DemoFleet(Small);
        IReadOnlyList<string> paths = await NdjsonExporter.WriteAsync(fleet, _root);
        bool anyLate = false;
        for (int v = 0; v < fleet.Vans.Count; v++)
        {
            DemoVan van = fleet.Vans[v];
            string text = await File.ReadAllTextAsync(paths[v], Encoding.UTF8);
            Assert.EndsWith("\n", text, StringComparison.Ordinal);
            string[] lines = text[..^1].Split('\n');
            IReadOnlyList<TelemetryBatch> batches = van.BuildBatches();
            List<TelemetryMessage> expected = [.. batches.SelectMany(b => b.Messages)];
            Assert.Equal(expected.Count, lines.Length);
            long newestUs = long.MinValue;
            for (int i = 0; i < lines.Length; i++)
            {
                using JsonDocument doc = JsonDocument.Parse(lines[i]);
                TelemetryMessage m = TelemetryJson.Read(doc.RootElement);
                Assert.Equal(expected[i], m);
                Assert.Equal(van.Id, m.Vehicle);
                anyLate |= m.TimeUs < newestUs - 60_000_000;
                newestUs = Math.Max(newestUs, m.TimeUs);
            }

            // Every measurement appears (a gnss fix per position); repeats only as whole retried batches.
            int positions = van.Measurements.Count(m => m.Kind == SensorKind.GnssPosition);
            int others = van.Measurements.Count(m => m.Kind is SensorKind.WheelSpeed or SensorKind.Imu);
            List<TelemetryMessage> originals = [.. batches.Where(b => !b.IsRetryCopy).SelectMany(b => b.Messages)];
            Assert.Equal(positions + others, originals.Count);
            Assert.Equal(originals.Count, originals.Select(m => m.Id).Distinct(StringComparer.Ordinal).Count());
            var originalIds = originals.Select(m => m.Id).ToHashSet(StringComparer.Ordinal);
            List<TelemetryMessage> copies = [.. batches.Where(b => b.IsRetryCopy).SelectMany(b => b.Messages)];
            Assert.All(copies, c => Assert.Contains(c.Id, originalIds));
            Assert.Equal(lines.Length, originals.Count + copies.Count);
        }

        Assert.True(anyLate, "no upload arrived minutes late in the whole fleet");
    }
}
