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
/// run at once, and none starts while the <see cref="TrackWriteQueue"/> is full; until then <see cref="DispatchAsync"/>
/// waits, which slows ingest down instead of buffering without bound. One vehicle's deliveries reach its grain one
/// after another in the order they got their slots (for one client posting batch after batch, the order of its
/// batches); different vehicles' run at once. Each delivery's fused-state lag
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

    // The newest delivery of each vehicle: the next one for that vehicle waits for it, so a vehicle's batches reach its
    // grain in the order they were handed over (a tracker flushing a backlog posts batch after batch; delivered out of
    // order, batches further apart than the replay window would be judged too late).
    private readonly Dictionary<(Guid FleetId, string VehicleId), Task> _tails = [];
    private readonly Lock _tailsGate = new();

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
    public async Task<Task> DispatchAsync(Guid fleetId, IReadOnlyDictionary<string, List<TrackMeasurement>> fresh, long transactionId)
    {
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

        var ordered = new List<(string VehicleId, List<TrackMeasurement> Measurements, Task Previous, TaskCompletionSource Done)>(fresh.Count);
        lock (_tailsGate)
        {
            foreach (var (vehicleId, measurements) in fresh)
            {
                var done = new TaskCompletionSource(TaskCreationOptions.RunContinuationsAsynchronously);
                var previous = _tails.TryGetValue((fleetId, vehicleId), out var tail) ? tail : Task.CompletedTask;
                _tails[(fleetId, vehicleId)] = done.Task;
                ordered.Add((vehicleId, measurements, previous, done));
            }
        }

        var delivery = DeliverAsync(fleetId, ordered, new CommitStamp(transactionId), committedAt);
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

    private async Task DeliverAsync(
        Guid fleetId, List<(string VehicleId, List<TrackMeasurement> Measurements, Task Previous, TaskCompletionSource Done)> fresh, CommitStamp stamp, long committedAt)
    {
        await Task.Yield();
        var calls = new List<Task<Exception?>>(fresh.Count);
        foreach (var item in fresh)
        {
            calls.Add(DeliverInTurnAsync(fleetId, item.VehicleId, item.Measurements, stamp, item.Previous, item.Done));
        }

        var failures = await Task.WhenAll(calls).ConfigureAwait(false);
        _metrics.ObserveTrackLag(Stopwatch.GetElapsedTime(committedAt).TotalSeconds);
        int failed = failures.Count(f => f is not null);
        if (failed > 0)
        {
            // One line per delivery, not per vehicle: under overload a line per vehicle would cost more than the work.
            _logger.LogWarning(
                failures.First(f => f is not null),
                "{Failed} of {Vehicles} tracks did not take their stored measurements; they rebuild from the store",
                failed,
                fresh.Count);
        }
    }

    private async Task<Exception?> DeliverInTurnAsync(
        Guid fleetId, string vehicleId, List<TrackMeasurement> measurements, CommitStamp stamp, Task previous, TaskCompletionSource done)
    {
        try
        {
            await previous.ConfigureAwait(false);
            return await DeliverOneAsync(fleetId, vehicleId, measurements, stamp).ConfigureAwait(false);
        }
        finally
        {
            done.SetResult();
            lock (_tailsGate)
            {
                if (_tails.TryGetValue((fleetId, vehicleId), out var tail) && tail == done.Task)
                {
                    _tails.Remove((fleetId, vehicleId));
                }
            }
        }
    }

    private async Task<Exception?> DeliverOneAsync(Guid fleetId, string vehicleId, List<TrackMeasurement> measurements, CommitStamp stamp)
    {
        var grain = _grains.GetGrain<IVehicleTrackGrain>(GrainKeys.Of(fleetId, vehicleId));
        using var span = FusionTelemetry.StartHandover(vehicleId, measurements.Count);
        try
        {
            await grain.ProcessAsync([.. measurements], stamp).ConfigureAwait(false);
            return null;
        }
        catch (Exception ex)
        {
            // Committed already, but the track may not have them (a call that timed out may never have run): make it
            // rebuild from the store, which holds them. If even that call fails, the track rebuilds at its next activation.
            span?.SetStatus(ActivityStatusCode.Error, ex.Message);
            long fromUs = measurements.Min(m => m.TimeUs);
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
}
