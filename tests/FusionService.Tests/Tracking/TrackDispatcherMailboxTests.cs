using System.Reflection;
using FusionService.Ingest;
using FusionService.Operations;
using FusionService.Tracking;
using Microsoft.Extensions.Logging.Abstractions;
using Microsoft.Extensions.Options;
using Xunit;

namespace FusionService.Tests.Tracking;

/// <summary>
/// The dispatcher's mailbox per vehicle: what is handed over for a vehicle while its grain call runs goes in one later
/// call, in the order it was handed over, and never runs beside the running call; other vehicles are not held up.
/// </summary>
public sealed class TrackDispatcherMailboxTests
{
    private static readonly Guid Fleet = Guid.Parse("8d7f6a52-0c1e-4b7a-9a1d-2f3c4b5a6978");

    [Fact]
    public async Task Hand_overs_queued_behind_a_running_call_go_together_in_order()
    {
        var grains = new RecordingGrains();
        await using var dispatcher = NewDispatcher(grains);
        var held = grains.HoldNextCall("van-1");

        var first = await dispatcher.DispatchAsync(Fleet, Fresh("van-1", 1_000), transactionId: 11);
        await held.Started.Task.WaitAsync(TimeSpan.FromSeconds(10));
        var second = await dispatcher.DispatchAsync(Fleet, Fresh("van-1", 2_000), transactionId: 13);
        var third = await dispatcher.DispatchAsync(Fleet, Fresh("van-1", 1_500), transactionId: 12);
        var other = await dispatcher.DispatchAsync(Fleet, Fresh("van-2", 1_000), transactionId: 14);

        // Another vehicle's call runs while van-1's is held.
        await other.WaitAsync(TimeSpan.FromSeconds(10));
        Assert.False(second.IsCompleted);

        held.Release.SetResult();
        await Task.WhenAll(first, second, third).WaitAsync(TimeSpan.FromSeconds(10));

        var calls = grains.CallsOf("van-1");
        Assert.Equal(2, calls.Count);
        Assert.Equal([11L], calls[0].Select(d => d.Stamp.TransactionId));
        Assert.Equal([13L, 12L], calls[1].Select(d => d.Stamp.TransactionId));
        Assert.Equal([2_000L, 1_500L], calls[1].Select(d => d.Batch[0].TimeUs));
        Assert.Equal(1, grains.MostAtOnce("van-1"));
    }

    [Fact]
    public async Task A_failed_call_fails_every_hand_over_it_carried_and_asks_for_a_rebuild_from_the_oldest()
    {
        var grains = new RecordingGrains();
        await using var dispatcher = NewDispatcher(grains);
        var held = grains.HoldNextCall("van-3");
        var first = await dispatcher.DispatchAsync(Fleet, Fresh("van-3", 5_000), transactionId: 21);
        await held.Started.Task.WaitAsync(TimeSpan.FromSeconds(10));
        grains.FailNextCall("van-3");
        var second = await dispatcher.DispatchAsync(Fleet, Fresh("van-3", 7_000), transactionId: 22);
        var third = await dispatcher.DispatchAsync(Fleet, Fresh("van-3", 6_000), transactionId: 23);
        held.Release.SetResult();
        await Task.WhenAll(first, second, third).WaitAsync(TimeSpan.FromSeconds(10));

        Assert.Equal([6_000L], grains.RebuildsOf("van-3"));
    }

    private static TrackDispatcher NewDispatcher(RecordingGrains grains)
    {
        var options = Options.Create(new IngestOptions());
        var writes = new TrackWriteQueue(null!, Options.Create(new TrackGrainOptions()), NullLogger<TrackWriteQueue>.Instance);
        return new TrackDispatcher(grains.Factory, writes, new ServiceMetrics(), options, NullLogger<TrackDispatcher>.Instance);
    }

    private static Dictionary<string, List<TrackMeasurement>> Fresh(string vehicleId, long timeUs) =>
        new() { [vehicleId] = [new TrackMeasurement(timeUs, 1, 1.0, 0.0, 0f)] };

    private sealed class Hold
    {
        public TaskCompletionSource Started { get; } = new(TaskCreationOptions.RunContinuationsAsynchronously);

        public TaskCompletionSource Release { get; } = new(TaskCreationOptions.RunContinuationsAsynchronously);
    }

    // Grains that record their calls per vehicle; a call can be held until released, or fail.
    private sealed class RecordingGrains
    {
        private readonly Lock _gate = new();
        private readonly Dictionary<string, List<TrackDelivery[]>> _calls = [];
        private readonly Dictionary<string, List<long>> _rebuilds = [];
        private readonly Dictionary<string, Hold> _holds = [];
        private readonly HashSet<string> _failing = [];
        private readonly Dictionary<string, (int Now, int Most)> _running = [];

        public RecordingGrains() => Factory = GrainFactoryProxy.Create(key => new Grain(this, key[(key.IndexOf('/') + 1)..]));

        public IGrainFactory Factory { get; }

        public Hold HoldNextCall(string vehicleId)
        {
            lock (_gate)
            {
                return _holds[vehicleId] = new Hold();
            }
        }

        public void FailNextCall(string vehicleId)
        {
            lock (_gate)
            {
                _failing.Add(vehicleId);
            }
        }

        public List<TrackDelivery[]> CallsOf(string vehicleId)
        {
            lock (_gate)
            {
                return [.. _calls.GetValueOrDefault(vehicleId) ?? []];
            }
        }

        public List<long> RebuildsOf(string vehicleId)
        {
            lock (_gate)
            {
                return [.. _rebuilds.GetValueOrDefault(vehicleId) ?? []];
            }
        }

        public int MostAtOnce(string vehicleId)
        {
            lock (_gate)
            {
                return _running[vehicleId].Most;
            }
        }

        private async Task CallAsync(string vehicleId, TrackDelivery[] deliveries)
        {
            Hold? hold;
            bool fail;
            lock (_gate)
            {
                var (now, most) = _running.GetValueOrDefault(vehicleId);
                _running[vehicleId] = (now + 1, Math.Max(most, now + 1));
                (_calls.TryGetValue(vehicleId, out var list) ? list : _calls[vehicleId] = []).Add(deliveries);
                _holds.Remove(vehicleId, out hold);
                fail = _failing.Remove(vehicleId);
            }

            try
            {
                if (hold is not null)
                {
                    hold.Started.SetResult();
                    await hold.Release.Task.ConfigureAwait(false);
                }

                if (fail)
                {
                    throw new InvalidOperationException("the grain call failed");
                }
            }
            finally
            {
                lock (_gate)
                {
                    var (now, most) = _running[vehicleId];
                    _running[vehicleId] = (now - 1, most);
                }
            }
        }

        private sealed class Grain(RecordingGrains owner, string vehicleId) : IVehicleTrackGrain
        {
            public Task ProcessAsync(TrackMeasurement[] batch, CommitStamp stamp) => owner.CallAsync(vehicleId, [new TrackDelivery(batch, stamp)]);

            public Task ProcessManyAsync(TrackDelivery[] deliveries) => owner.CallAsync(vehicleId, deliveries);

            public Task<VehicleStateSnapshot?> GetStateAsync() => Task.FromResult<VehicleStateSnapshot?>(null);

            public Task RebuildAsync(long fromUs)
            {
                lock (owner._gate)
                {
                    (owner._rebuilds.TryGetValue(vehicleId, out var list) ? list : owner._rebuilds[vehicleId] = []).Add(fromUs);
                }

                return Task.CompletedTask;
            }

            public Task PersistCheckpointAsync() => Task.CompletedTask;

            public GrainId GetGrainId() => throw new NotSupportedException();

            public IGrainContext? GrainContext => null;
        }
    }

    // An IGrainFactory whose GetGrain calls (string keys) return the grain the test makes for the key.
    public class GrainFactoryProxy : DispatchProxy
    {
        private Func<string, IVehicleTrackGrain> _make = null!;

        internal static IGrainFactory Create(Func<string, IVehicleTrackGrain> make)
        {
            var factory = DispatchProxy.Create<IGrainFactory, GrainFactoryProxy>();
            ((GrainFactoryProxy)(object)factory)._make = make;
            return factory;
        }

        protected override object? Invoke(MethodInfo? targetMethod, object?[]? args) =>
            targetMethod?.Name == nameof(IGrainFactory.GetGrain) && args is [string key, ..]
                ? _make(key)
                : throw new NotSupportedException(targetMethod?.Name);
    }
}
