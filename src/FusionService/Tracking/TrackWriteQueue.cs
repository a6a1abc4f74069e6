// Background writer of the tracks' fused states and outcome updates.
using System.Threading.Channels;
using FusionService.Database;
using FusionService.Storage.FusedStates;
using FusionService.Storage.Measurements;
using Microsoft.Extensions.Options;

namespace FusionService.Tracking;

/// <summary>
/// Collects fused states and outcome updates from the track grains and writes them in bulk every
/// <see cref="TrackGrainOptions.FlushIntervalMs"/> (COPY into staging tables, then one set-based statement each).
/// The queue is bounded: grains wait when it is full. A failed write is retried with the same rows; at shutdown the
/// queue is drained. Register it before the Orleans silo, so it stops after the grains have deactivated.
/// </summary>
public sealed class TrackWriteQueue : BackgroundService
{
    private readonly Channel<(IReadOnlyList<MeasurementOutcomeUpdate> Outcomes, IReadOnlyList<FusedStateRow> States)> _channel;
    private readonly FusionDatabase _database;
    private readonly TrackGrainOptions _options;
    private readonly ILogger<TrackWriteQueue> _logger;
    private readonly List<MeasurementOutcomeUpdate> _outcomes = [];
    private readonly List<FusedStateRow> _states = [];
    private readonly SemaphoreSlim _flush = new(1, 1);

    /// <summary>Creates the queue.</summary>
    public TrackWriteQueue(FusionDatabase database, IOptions<TrackGrainOptions> options, ILogger<TrackWriteQueue> logger)
    {
        _database = database;
        _options = options.Value;
        _logger = logger;
        _channel = Channel.CreateBounded<(IReadOnlyList<MeasurementOutcomeUpdate>, IReadOnlyList<FusedStateRow>)>(
            new BoundedChannelOptions(Math.Max(1, _options.WriteQueueCapacity / 64)) { SingleReader = true, FullMode = BoundedChannelFullMode.Wait });
    }

    /// <summary>Number of batches waiting.</summary>
    public int Depth => _channel.Reader.Count;

    /// <summary>Queues writes; waits while the queue is full.</summary>
    public ValueTask EnqueueAsync(IReadOnlyList<MeasurementOutcomeUpdate> outcomes, IReadOnlyList<FusedStateRow> states) =>
        outcomes.Count == 0 && states.Count == 0 ? ValueTask.CompletedTask : _channel.Writer.WriteAsync((outcomes, states));

    /// <summary>Writes everything queued so far (tests and shutdown).</summary>
    public async Task FlushAsync(CancellationToken cancellationToken)
    {
        await _flush.WaitAsync(cancellationToken).ConfigureAwait(false);
        try
        {
            await FlushLockedAsync(cancellationToken).ConfigureAwait(false);
        }
        finally
        {
            _flush.Release();
        }
    }

    /// <inheritdoc />
    public override void Dispose()
    {
        _flush.Dispose();
        base.Dispose();
    }

    private async Task FlushLockedAsync(CancellationToken cancellationToken)
    {
        while (_channel.Reader.TryRead(out var item))
        {
            _outcomes.AddRange(item.Outcomes);
            _states.AddRange(item.States);
        }

        // The two writes touch different tables: run them at once on two connections. Each list is cleared only
        // when its own write succeeded, so a failed one is retried with the same rows at the next flush.
        await Task.WhenAll(WriteOutcomesAsync(cancellationToken), WriteStatesAsync(cancellationToken)).ConfigureAwait(false);
    }

    private async Task WriteOutcomesAsync(CancellationToken cancellationToken)
    {
        if (_outcomes.Count > 0)
        {
            await MeasurementOutcomeUpdater.ApplyAsync(_database.DataSource, _outcomes, cancellationToken).ConfigureAwait(false);
            _outcomes.Clear();
        }
    }

    private async Task WriteStatesAsync(CancellationToken cancellationToken)
    {
        if (_states.Count > 0)
        {
            await FusedStateUpserter.UpsertAsync(_database.DataSource, _states, cancellationToken).ConfigureAwait(false);
            _states.Clear();
        }
    }

    /// <inheritdoc />
    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        try
        {
            while (!stoppingToken.IsCancellationRequested)
            {
                await Task.Delay(_options.FlushIntervalMs, stoppingToken).ConfigureAwait(false);
                await FlushOnceAsync(stoppingToken).ConfigureAwait(false);
            }
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
            using var drain = new CancellationTokenSource(TimeSpan.FromSeconds(10));
            await FlushOnceAsync(drain.Token).ConfigureAwait(false);
        }
    }

    private async Task FlushOnceAsync(CancellationToken cancellationToken)
    {
        try
        {
            await FlushAsync(cancellationToken).ConfigureAwait(false);
        }
        catch (Exception ex) when (ex is Npgsql.NpgsqlException or InvalidOperationException or TimeoutException or IOException)
        {
            _logger.LogWarning(ex, "Writing {Outcomes} outcomes and {States} fused states failed; retrying", _outcomes.Count, _states.Count);
            _database.NoteFailure(ex);
        }
        catch (ArgumentException ex)
        {
            // Rows the store refuses before sending can never succeed: log and drop them rather than stop the host.
            _logger.LogError(ex, "Dropped {Outcomes} outcomes and {States} fused states the store refused", _outcomes.Count, _states.Count);
            _outcomes.Clear();
            _states.Clear();
        }
    }
}
