// Hands committed measurements to the vehicle track grains, off the acknowledgement path.
using System.Collections.Concurrent;
using System.Diagnostics;
using FusionService.Ingest;
using FusionService.Operations;
using Microsoft.Extensions.Options;

namespace FusionService.Tracking;

/// <summary>
/// Delivers committed measurements to their vehicles' track grains. The measurements are already durable when they
/// arrive here, so a failed delivery loses nothing: the grain is told to rebuild itself from the store
/// (<see cref="IVehicleTrackGrain.RebuildAsync"/>). At most <see cref="IngestOptions.MaxBatchesInTracking"/> deliveries
/// run at once, and none starts while the <see cref="TrackWriteQueue"/> is full; until then <c>DispatchAsync</c>
/// waits, which slows ingest down instead of buffering without bound. One vehicle's hand-overs reach its grain one
/// after another, never two at once: what is handed over for a vehicle while its grain call runs waits in the vehicle's
/// mailbox, in the order it got its slot (for one client posting batch after batch, the order of its batches), and
/// goes in one call when the running one ends (<see cref="IVehicleTrackGrain.ProcessManyAsync"/>). Under load a
/// gateway's batches that each carry a message or two per vehicle so cost a grain call per vehicle per round, not
/// per message, and the grain fuses what queued in canonical order. Different vehicles' calls run at once. Each
/// delivery's fused-state lag
/// (commit to processed by the grain) goes to <see cref="ServiceMetrics.ObserveTrackLag"/>. Registered as a hosted
/// service after the Orleans silo, so that at shutdown it stops first and lets the deliveries in flight finish.
/// </summary>
public sealed class TrackDispatcher : IHostedService, IAsyncDisposable
{
    private readonly IGrainFactory _grains;
    private readonly TrackWriteQueue _writes;
    private readonly ServiceMetrics _metrics;
    private readonly ILogger<TrackDispatcher> _logger;
    private readonly SemaphoreSlim _slots;
    private readonly ConcurrentDictionary<Task, bool> _inFlight = new();

    // The vehicles whose grain call runs, with what was handed over for them since: the next call takes all of it, in
    // the order it was handed over (a tracker flushing a backlog posts batch after batch; delivered out of order,
    // batches further apart than the replay window would be judged too late).
    private readonly Dictionary<(Guid FleetId, string VehicleId), List<Handover>> _mailboxes = [];
    private readonly Lock _mailboxesGate = new();

    /// <summary>Creates the dispatcher.</summary>
    public TrackDispatcher(
        IGrainFactory grains, TrackWriteQueue writes, ServiceMetrics metrics, IOptions<IngestOptions> options, ILogger<TrackDispatcher> logger)
    {
        ArgumentNullException.ThrowIfNull(options);
        _grains = grains;
        _writes = writes;
        _metrics = metrics;
        _logger = logger;
        _slots = new SemaphoreSlim(options.Value.MaxBatchesInTracking, options.Value.MaxBatchesInTracking);
        metrics.TracksInFlight = () => _inFlight.Count;
        metrics.TrackWriteQueueRows = () => writes.QueuedRows;
    }

    /// <summary>
    /// Starts delivering <paramref name="fresh"/> (newly committed measurements by vehicle id) to the grains of
    /// <paramref name="fleetId"/>. The returned outer task completes once the delivery has a slot; the inner task
    /// when every grain has processed its measurements (it never faults: failures are logged).
    /// <paramref name="transactionId"/> is the PostgreSQL transaction id of the commit that stored them (0 when unknown).
    /// </summary>
    public Task<Task> DispatchAsync(Guid fleetId, IReadOnlyDictionary<string, List<TrackMeasurement>> fresh, long transactionId) =>
        DispatchAsync(fleetId, fresh, _ => transactionId);

    /// <summary>
    /// As <see cref="DispatchAsync(Guid, IReadOnlyDictionary{string, List{TrackMeasurement}}, long)"/>, each vehicle's
    /// measurements stored by the commit whose transaction id <paramref name="transactionIdOf"/> gives for it.
    /// </summary>
    public async Task<Task> DispatchAsync(Guid fleetId, IReadOnlyDictionary<string, List<TrackMeasurement>> fresh, Func<string, long> transactionIdOf)
    {
        ArgumentNullException.ThrowIfNull(transactionIdOf);
        ArgumentNullException.ThrowIfNull(fresh);
        if (fresh.Count == 0)
        {
            return Task.CompletedTask;
        }

        long committedAt = Stopwatch.GetTimestamp();
        await _slots.WaitAsync().ConfigureAwait(false);
        try
        {
            await _writes.WaitForRoomAsync().ConfigureAwait(false);
        }
        catch
        {
            _slots.Release();
            throw;
        }

        var handovers = new List<Handover>(fresh.Count);
        var starts = new List<Handover>();
        lock (_mailboxesGate)
        {
            foreach (var (vehicleId, measurements) in fresh)
            {
                var handover = new Handover(vehicleId, new TrackDelivery([.. measurements], new CommitStamp(transactionIdOf(vehicleId))));
                handovers.Add(handover);
                if (_mailboxes.TryGetValue((fleetId, vehicleId), out var waiting))
                {
                    waiting.Add(handover);
                }
                else
                {
                    // No call runs for this vehicle: one starts with this hand-over, and an empty mailbox marks it running.
                    _mailboxes[(fleetId, vehicleId)] = [];
                    starts.Add(handover);
                }
            }
        }

        foreach (var handover in starts)
        {
            _ = RunMailboxAsync(fleetId, [handover]);
        }

        var delivery = DeliverAsync(handovers, committedAt);
        _inFlight.TryAdd(delivery, true);
        _ = delivery.ContinueWith(
            (done, state) =>
            {
                var self = (TrackDispatcher)state!;
                self._inFlight.TryRemove(done, out _);
                self._slots.Release();
            },
            this,
            CancellationToken.None,
            TaskContinuationOptions.ExecuteSynchronously,
            TaskScheduler.Default);
        return delivery;
    }

    /// <summary>Completes when every delivery started before the call has finished (tests, shutdown).</summary>
    public Task WhenIdleAsync() => Task.WhenAll(_inFlight.Keys);

    /// <inheritdoc />
    public Task StartAsync(CancellationToken cancellationToken) => Task.CompletedTask;

    /// <summary>Lets the deliveries in flight finish before the silo stops (until <paramref name="cancellationToken"/> fires).</summary>
    public Task StopAsync(CancellationToken cancellationToken) =>
        WhenIdleAsync().WaitAsync(cancellationToken).ContinueWith(_ => { }, CancellationToken.None, TaskContinuationOptions.ExecuteSynchronously, TaskScheduler.Default);

    /// <summary>Waits up to 30 s for deliveries in flight.</summary>
    public async ValueTask DisposeAsync()
    {
        await WhenIdleAsync().WaitAsync(TimeSpan.FromSeconds(30)).ConfigureAwait(ConfigureAwaitOptions.SuppressThrowing);
        _slots.Dispose();
    }

    private async Task DeliverAsync(List<Handover> handovers, long committedAt)
    {
        var failures = await Task.WhenAll(handovers.Select(h => h.Done.Task)).ConfigureAwait(false);
        _metrics.ObserveTrackLag(Stopwatch.GetElapsedTime(committedAt).TotalSeconds);
        int failed = failures.Count(f => f is not null);
        if (failed > 0)
        {
            // One line per delivery, not per vehicle: under overload a line per vehicle would cost more than the work.
            _logger.LogWarning(
                failures.First(f => f is not null),
                "{Failed} of {Vehicles} tracks did not take their stored measurements; they rebuild from the store",
                failed,
                handovers.Count);
        }
    }

    // Calls the vehicle's grain with the hand-overs given, then with everything that queued in its mailbox meanwhile,
    // until the mailbox is empty; then the vehicle has no call running.
    private async Task RunMailboxAsync(Guid fleetId, List<Handover> next)
    {
        await Task.Yield();
        string vehicleId = next[0].VehicleId;
        while (true)
        {
            var failure = await DeliverOneAsync(fleetId, vehicleId, next).ConfigureAwait(false);
            foreach (var handover in next)
            {
                handover.Done.SetResult(failure);
            }

            lock (_mailboxesGate)
            {
                var waiting = _mailboxes[(fleetId, vehicleId)];
                if (waiting.Count == 0)
                {
                    _mailboxes.Remove((fleetId, vehicleId));
                    return;
                }

                next = [.. waiting];
                waiting.Clear();
            }
        }
    }

    private async Task<Exception?> DeliverOneAsync(Guid fleetId, string vehicleId, List<Handover> handovers)
    {
        var grain = _grains.GetGrain<IVehicleTrackGrain>(GrainKeys.Of(fleetId, vehicleId));
        int count = handovers.Sum(h => h.Delivery.Batch.Length);
        using var span = FusionTelemetry.StartHandover(vehicleId, count);
        try
        {
            // A single hand-over keeps the older call, which grains of processes from before ProcessManyAsync still
            // answer while a cluster is upgraded process by process.
            if (handovers.Count == 1)
            {
                await grain.ProcessAsync(handovers[0].Delivery.Batch, handovers[0].Delivery.Stamp).ConfigureAwait(false);
            }
            else
            {
                await grain.ProcessManyAsync([.. handovers.Select(h => h.Delivery)]).ConfigureAwait(false);
            }

            return null;
        }
        catch (Exception ex)
        {
            // Committed already, but the track may not have them (a call that timed out may never have run): make it
            // rebuild from the store, which holds them. If even that call fails, the track rebuilds at its next activation.
            span?.SetStatus(ActivityStatusCode.Error, ex.Message);
            long fromUs = handovers.Min(h => h.Delivery.Batch.Min(m => m.TimeUs));
            try
            {
                await grain.RebuildAsync(fromUs).ConfigureAwait(false);
            }
            catch (Exception rebuild)
            {
                _logger.LogError(rebuild, "Track of vehicle {Vehicle} could not be told to rebuild from {FromUs}", vehicleId, fromUs);
            }

            return ex;
        }
    }

    // One vehicle's part of a delivery; Done carries the failure of the grain call that took it (null when it took it).
    private sealed class Handover(string vehicleId, TrackDelivery delivery)
    {
        public string VehicleId { get; } = vehicleId;

        public TrackDelivery Delivery { get; } = delivery;

        public TaskCompletionSource<Exception?> Done { get; } = new(TaskCreationOptions.RunContinuationsAsynchronously);
    }
}
