// One writer that commits the rows of many concurrent requests in one transaction.
using System.Diagnostics;
using System.Threading.Channels;
using FusionService.Database;
using FusionService.Operations;
using FusionService.Storage.Measurements;
using Microsoft.Extensions.Options;

namespace FusionService.Ingest;

/// <summary>
/// Group commit: requests put their rows into a bounded channel; <see cref="IngestOptions.CommitWriters"/> background
/// loops each take what has arrived within <see cref="IngestOptions.CommitWindowMs"/>, store it in one transaction
/// (<see cref="MeasurementIngest"/>) and then complete every request with the keys it inserted. When two concurrent
/// transactions carry the same key, the second waits on the first's index entry and then finds it taken, so a key is
/// still claimed once. A full channel refuses at once (503), a failed transaction
/// fails every request in it (503); nothing is buffered beyond the channel and nothing is dropped silently.
/// </summary>
public sealed class GroupCommitWriter : BackgroundService
{
    private readonly Channel<CommitRequest> _channel;
    private readonly FusionDatabase _database;
    private readonly IngestOptions _options;
    private readonly ServiceMetrics _metrics;
    private readonly ILogger<GroupCommitWriter> _logger;

    /// <summary>Creates the writer.</summary>
    public GroupCommitWriter(
        FusionDatabase database, IOptions<IngestOptions> options, ServiceMetrics metrics, ILogger<GroupCommitWriter> logger)
    {
        _database = database;
        _options = options.Value;
        _metrics = metrics;
        _logger = logger;
        _channel = Channel.CreateBounded<CommitRequest>(new BoundedChannelOptions(_options.QueueCapacity)
        {
            FullMode = BoundedChannelFullMode.Wait,
            SingleReader = _options.CommitWriters == 1,
        });
        metrics.QueueDepth = () => _channel.Reader.Count;
    }

    /// <summary>
    /// Stores <paramref name="rows"/> (a request's rows) durably and returns the keys among them that were new;
    /// a key that appears several times among concurrent requests is claimed by the first. With them comes the
    /// PostgreSQL transaction id of the commit (0 when there was nothing to store), the token that tells a track
    /// restored afterwards whether its restore already read them (<see cref="Tracking.CommitStamp"/>).
    /// </summary>
    /// <exception cref="ServiceUnavailableException">The queue is full or the commit failed.</exception>
    public Task<(HashSet<MeasurementKey> Inserted, long TransactionId)> CommitAsync(IReadOnlyList<MeasurementRow> rows)
    {
        var request = new CommitRequest(rows);
        if (rows.Count == 0)
        {
            request.Completion.SetResult(([], 0));
        }
        else if (!_channel.Writer.TryWrite(request))
        {
            throw new ServiceUnavailableException("the write queue is full");
        }

        return request.Completion.Task;
    }

    /// <inheritdoc />
    protected override Task ExecuteAsync(CancellationToken stoppingToken) =>
        Task.WhenAll(Enumerable.Range(0, _options.CommitWriters).Select(_ => Task.Run(() => WriteLoopAsync(stoppingToken), CancellationToken.None)));

    private async Task WriteLoopAsync(CancellationToken stoppingToken)
    {
        var batch = new List<CommitRequest>();
        var reader = _channel.Reader;
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

    private const string TransactionIdSql = "SELECT pg_current_xact_id()::text::bigint";

    private async Task<(HashSet<MeasurementKey> Inserted, long TransactionId)> CommitOnceAsync(List<MeasurementRow> rows, CancellationToken cancellationToken)
    {
        var connection = await _database.DataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
        await using (connection.ConfigureAwait(false))
        {
            var transaction = await connection.BeginTransactionAsync(cancellationToken).ConfigureAwait(false);
            await using (transaction.ConfigureAwait(false))
            {
                var inserted = await MeasurementIngest.InsertNewAsync(connection, transaction, rows, cancellationToken).ConfigureAwait(false);
                long transactionId;
                await using (var command = new Npgsql.NpgsqlCommand(TransactionIdSql, connection, transaction))
                {
                    transactionId = (long)(await command.ExecuteScalarAsync(cancellationToken).ConfigureAwait(false))!;
                }

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
