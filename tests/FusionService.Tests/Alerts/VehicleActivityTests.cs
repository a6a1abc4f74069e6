// The table of last receipts is read by the silence scanner while track grains add vehicles to it.
using FusionService.Alerts;

namespace FusionService.Tests.Alerts;

public sealed class VehicleActivityTests
{
    [Fact]
    public async Task A_snapshot_taken_while_vehicles_are_added_is_whole_and_never_throws()
    {
        // Found in a CI run: a snapshot sized by the count and then copied threw ArgumentException when a vehicle was
        // added in between, and the exception stopped the host. Two writers add new vehicles while snapshots are taken.
        var activity = new VehicleActivity();
        var fleet = Guid.NewGuid();
        var at = DateTimeOffset.UnixEpoch;
        const int PerWriter = 200_000;
        using var stop = new CancellationTokenSource(TimeSpan.FromSeconds(60));
        var writers = Enumerable.Range(0, 2).Select(w => Task.Run(() =>
        {
            for (int i = 0; i < PerWriter && !stop.IsCancellationRequested; i++)
            {
                activity.Note(fleet, $"van-{w}-{i}", at);
            }
        })).ToArray();

        int snapshots = 0, previous = 0;
        while (!writers.All(t => t.IsCompleted))
        {
            var snapshot = activity.Snapshot();
            Assert.True(snapshot.Count >= previous, "a later snapshot holds fewer vehicles than an earlier one");
            Assert.Equal(snapshot.Count, snapshot.Select(e => e.Key).Distinct().Count());
            previous = snapshot.Count;
            snapshots++;
        }

        await Task.WhenAll(writers);
        Assert.Equal(2 * PerWriter, activity.Snapshot().Count);
        Assert.True(snapshots > 1, "no snapshot was taken while the writers ran");
    }
}
