// One writer that commits the rows of many concurrent requests in one transaction.
using System.Diagnostics;
using System.Threading.Channels;
using FusionService.Database;
using FusionService.Operations;
using FusionService.Storage.Measurements;
using Microsoft.Extensions.Options;

namespace FusionService.Ingest;

/// <summary>
/// Group commit: requests put their rows into bounded channels; <see cref="IngestOptions.CommitWriters"/> background
/// loops each take what has arrived on their channel within <see cref="IngestOptions.CommitWindowMs"/> (within
/// <see cref="IngestOptions.MixedCommitWindowMs"/> when the first request spreads its rows thinly over many vehicles, as a
/// gateway's does: its next batches carry the same vans, and joined they make fewer, larger chunks), store it in one
/// transaction (<see cref="MeasurementIngest"/>) and then complete every request with the keys it inserted. Each loop
/// owns a share of the vehicles' lock buckets (<see cref="IngestBuckets"/>, bucket modulo the number of loops) and a
/// request's rows are split by it, so the loops never wait for each other's bucket locks: a batch mixing hundreds of
/// vans used to touch nearly every bucket, and the loops then committed one at a time. Concurrent transactions of
/// other processes that carry the same key still serialise on the bucket's lock, so a key is claimed once. A full
/// channel refuses at once (503), a failed transaction fails every request in it (503); nothing is buffered beyond the
/// channels and nothing is dropped silently (a request whose other part committed is refused all the same: a resend
/// finds those rows stored and hands those still pending to their tracks).
/// </summary>
public sealed class GroupCommitWriter : BackgroundService
{
    private readonly Channel<CommitRequest>[] _channels;
    private readonly FusionDatabase _database;
    private readonly IngestOptions _options;
    private readonly ServiceMetrics _metrics;
    private readonly IngestActivity _activity;
    private readonly ChunkFoldQueue _folds;
    private readonly ILogger<GroupCommitWriter> _logger;

    /// <summary>Creates the writer.</summary>
    public GroupCommitWriter(
        FusionDatabase database, IOptions<IngestOptions> options, ServiceMetrics metrics, IngestActivity activity, ChunkFoldQueue folds,
        ILogger<GroupCommitWriter> logger)
    {
        _database = database;
        _folds = folds;
        _options = options.Value;
        _metrics = metrics;
        _activity = activity;
        _logger = logger;
        _channels = [.. Enumerable.Range(0, _options.CommitWriters).Select(_ => Channel.CreateBounded<CommitRequest>(
            new BoundedChannelOptions(_options.QueueCapacity) { FullMode = BoundedChannelFullMode.Wait, SingleReader = true }))];
        metrics.QueueDepth = () => _channels.Sum(c => c.Reader.Count);
    }

    /// <summary>The commit loop, of <paramref name="writers"/>, that stores a vehicle's rows: its bucket modulo the loops.</summary>
    internal static int WriterOf(Guid fleetId, string vehicleId, int writers) =>
        writers == 1 ? 0 : IngestBuckets.Of(fleetId, vehicleId) % writers;

    /// <summary>
    /// Stores <paramref name="rows"/> (a request's rows) durably and returns the keys among them that were new;
    /// a key that appears several times among concurrent requests is claimed by the first. With them come the
    /// PostgreSQL transaction ids of the commits, per vehicle, the token that tells a track restored afterwards whether
    /// its restore already read them (<see cref="Tracking.CommitStamp"/>).
    /// </summary>
    /// <exception cref="ServiceUnavailableException">A queue is full or a commit failed.</exception>
    public async Task<CommitOutcome> CommitAsync(IReadOnlyList<MeasurementRow> rows)
    {
        ArgumentNullException.ThrowIfNull(rows);
        IReadOnlyList<MeasurementRow>?[] parts = _channels.Length == 1 ? [rows] : SplitByWriter(rows);
        var requests = new CommitRequest?[_channels.Length];
        for (int i = 0; i < parts.Length; i++)
        {
            if (parts[i] is not { Count: > 0 } part)
            {
                continue;
            }

            var request = new CommitRequest(part);
            if (!_channels[i].Writer.TryWrite(request))
            {
                request.EndSpan(0, 0, "the write queue is full");
                throw new ServiceUnavailableException("the write queue is full");
            }

            requests[i] = request;
        }

        var inserted = new HashSet<MeasurementKey>();
        var transactionIds = new long[_channels.Length];
        for (int i = 0; i < requests.Length; i++)
        {
            if (requests[i] is { } request)
            {
                var (keys, transactionId) = await request.Completion.Task.ConfigureAwait(false);
                inserted.UnionWith(keys);
                transactionIds[i] = transactionId;
            }
        }

        return new CommitOutcome(inserted, transactionIds);
    }

    // A request's rows by the commit loop that stores each vehicle's (null where a loop gets none).
    private List<MeasurementRow>?[] SplitByWriter(IReadOnlyList<MeasurementRow> rows)
    {
        var parts = new List<MeasurementRow>?[_channels.Length];
        var writerOf = new Dictionary<(Guid FleetId, string VehicleId), int>();
        foreach (var row in rows)
        {
            if (!writerOf.TryGetValue((row.FleetId, row.VehicleId), out int writer))
            {
                writerOf[(row.FleetId, row.VehicleId)] = writer = WriterOf(row.FleetId, row.VehicleId, _channels.Length);
            }

            (parts[writer] ??= []).Add(row);
        }

        return parts;
    }

    /// <inheritdoc />
    protected override Task ExecuteAsync(CancellationToken stoppingToken) =>
        Task.WhenAll(_channels.Select(channel => Task.Run(() => WriteLoopAsync(channel.Reader, stoppingToken), CancellationToken.None)));

    private async Task WriteLoopAsync(ChannelReader<CommitRequest> reader, CancellationToken stoppingToken)
    {
        var batch = new List<CommitRequest>();
        try
        {
            while (await reader.WaitToReadAsync(stoppingToken).ConfigureAwait(false))
            {
                batch.Clear();
                int rows = 0;
                if (_options.CommitWindowMs > 0)
                {
                    await Task.Delay(_options.CommitWindowMs, stoppingToken).ConfigureAwait(false);
                }

                // A gateway's batch waits longer, so that its next batches' rows of the same vans join its chunks.
                if (_options.MixedCommitWindowMs > _options.CommitWindowMs && reader.TryPeek(out var first) && first.Mixed)
                {
                    await Task.Delay(_options.MixedCommitWindowMs - _options.CommitWindowMs, stoppingToken).ConfigureAwait(false);
                }

                while (rows < _options.MaxRowsPerCommit && reader.TryRead(out var request))
                {
                    batch.Add(request);
                    rows += request.Rows.Count;
                }

                await CommitBatchAsync(batch, rows, stoppingToken).ConfigureAwait(false);
            }
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
            // Shutting down: whatever is still queued is refused, never silently lost.
            foreach (var request in batch)
            {
                request.EndSpan(0, 0, "the service is stopping");
                request.Completion.TrySetException(new ServiceUnavailableException("the service is stopping"));
            }

            while (reader.TryRead(out var request))
            {
                request.EndSpan(0, 0, "the service is stopping");
                request.Completion.TrySetException(new ServiceUnavailableException("the service is stopping"));
            }
        }
    }

    private const string DeadlockDetected = "40P01";
    private const string SerializationFailure = "40001";

    private async Task<(HashSet<MeasurementKey> Inserted, long TransactionId)> CommitOnceAsync(List<MeasurementRow> rows, CancellationToken cancellationToken)
    {
        var connection = await _database.DataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var transaction = await connection.BeginTransactionAsync(cancellationToken).ConfigureAwait(false);
            await using (transaction.ConfigureAwait(false))
            {
                var (inserted, transactionId) = await MeasurementIngest.InsertNewAsync(connection, transaction, rows, cancellationToken).ConfigureAwait(false);
                await transaction.CommitAsync(cancellationToken).ConfigureAwait(false);
                return (inserted, transactionId);
            }
        }
    }

    private async Task CommitBatchAsync(List<CommitRequest> batch, int rowCount, CancellationToken cancellationToken)
    {
        var all = new List<MeasurementRow>(rowCount);
        foreach (var request in batch)
        {
            all.AddRange(request.Rows);
        }

        using var span = FusionTelemetry.StartGroupCommit(rowCount, batch.Select(r => r.Span?.Context ?? default));
        var watch = Stopwatch.StartNew();
        HashSet<MeasurementKey> inserted;
        long transactionId;
        try
        {
            try
            {
                (inserted, transactionId) = await CommitOnceAsync(all, cancellationToken).ConfigureAwait(false);
            }
            catch (Npgsql.PostgresException ex) when (ex.SqlState is DeadlockDetected or SerializationFailure)
            {
                // Concurrent writers can still collide in ways no lock order rules out (two requests resending the
                // same messages in different orders); the transaction was rolled back whole, so it is safe to run again.
                _logger.LogInformation("Group commit of {Rows} rows met {SqlState}; running it again", rowCount, ex.SqlState);
                (inserted, transactionId) = await CommitOnceAsync(all, cancellationToken).ConfigureAwait(false);
            }
        }
        catch (Exception ex) when (ex is not OperationCanceledException || !cancellationToken.IsCancellationRequested)
        {
            // A database outage is logged once by the store (down, then up again), not once per failed commit.
            if (_database.NoteFailure(ex))
            {
                _logger.LogDebug(ex, "Group commit of {Rows} rows from {Requests} requests failed", rowCount, batch.Count);
            }
            else
            {
                _logger.LogWarning(ex, "Group commit of {Rows} rows from {Requests} requests failed", rowCount, batch.Count);
            }
            span?.SetStatus(ActivityStatusCode.Error, ex.Message);
            foreach (var request in batch)
            {
                request.EndSpan(rowCount, batch.Count, "the database is unavailable");
                request.Completion.TrySetException(new ServiceUnavailableException("the database is unavailable", ex));
            }

            return;
        }

        _database.NoteSuccess();
        _metrics.ObserveCommit(watch.Elapsed.TotalSeconds, rowCount);
        _activity.MarkCommitted();
        _folds.Note(inserted);
        foreach (var request in batch)
        {
            var claimed = new HashSet<MeasurementKey>();
            foreach (var row in request.Rows)
            {
                var key = MeasurementKey.Of(row);
                if (inserted.Remove(key))
                {
                    claimed.Add(key);
                }
            }

            request.EndSpan(rowCount, batch.Count);
            request.Completion.TrySetResult((claimed, transactionId));
        }
    }
}
