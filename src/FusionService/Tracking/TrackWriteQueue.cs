// Background writer of the tracks' fused states and outcome updates.
using System.Threading.Channels;
using FusionService.Database;
using FusionService.Storage.Failures;
using FusionService.Storage.FusedStates;
using FusionService.Storage.Measurements;
using Microsoft.Extensions.Options;

namespace FusionService.Tracking;

/// <summary>
/// Collects fused states and outcome updates from the track grains and writes them in bulk every
/// <see cref="TrackGrainOptions.FlushIntervalMs"/> (verdicts written into their measurements' chunks, fused states
/// through a staging table and one upsert).
/// Grains never wait here (a grain call that waits can outlive Orleans' response timeout and have later calls
/// dropped); the bound is kept one step earlier: the <see cref="TrackDispatcher"/> waits in
/// <see cref="WaitForRoomAsync"/> while more than <see cref="TrackGrainOptions.WriteQueueCapacity"/> rows are
/// queued. A failed write is retried with the same rows; a stop drains the queue however the loop ended (a
/// write in progress is finished, not cancelled, then every queued row is written, retrying while the store refuses). Register it before the
/// Orleans silo, so it stops after the grains have deactivated.
/// </summary>
public sealed class TrackWriteQueue : BackgroundService
{
    private readonly Channel<(IReadOnlyList<MeasurementOutcomeUpdate> Outcomes, IReadOnlyList<FusedStateRow> States, long Ticket)> _channel =
        Channel.CreateUnbounded<(IReadOnlyList<MeasurementOutcomeUpdate>, IReadOnlyList<FusedStateRow>, long)>(new UnboundedChannelOptions { SingleReader = true });

    // Tickets number the Enqueue calls in channel order (taken under _enqueueGate); _readThrough is the newest ticket a
    // flush has taken from the channel, _writtenThrough the newest whose rows (and every earlier one's) are written.
    private readonly Lock _enqueueGate = new();
    private long _tickets;
    private long _readThrough;
    private long _writtenThrough;

    private readonly FusionDatabase _database;
    private readonly TrackGrainOptions _options;
    private readonly ILogger<TrackWriteQueue> _logger;
    private readonly List<MeasurementOutcomeUpdate> _outcomes = [];
    private readonly List<FusedStateRow> _states = [];
    private readonly SemaphoreSlim _flush = new(1, 1);
    private readonly Lock _roomGate = new();
    private TaskCompletionSource _written = new(TaskCreationOptions.RunContinuationsAsynchronously);
    private long _queuedRows;
    private readonly VerdictWriteSpans _spans = new();

    /// <summary>Creates the queue.</summary>
    public TrackWriteQueue(FusionDatabase database, IOptions<TrackGrainOptions> options, ILogger<TrackWriteQueue> logger)
    {
        ArgumentNullException.ThrowIfNull(options);
        _database = database;
        _options = options.Value;
        _logger = logger;
    }

    /// <summary>Rows (outcome updates and fused states) queued and not yet written.</summary>
    public long QueuedRows => Interlocked.Read(ref _queuedRows);

    /// <summary>The newest ticket whose rows, and those of every earlier ticket, are durably written.</summary>
    public long WrittenThrough => Interlocked.Read(ref _writtenThrough);

    /// <summary>The newest ticket handed out by <see cref="Enqueue"/> (0 before the first).</summary>
    public long LastTicket => Interlocked.Read(ref _tickets);

    /// <summary>
    /// Queues writes; never waits (see <see cref="WaitForRoomAsync"/> for the bound). Returns the call's ticket: once
    /// <see cref="WrittenThrough"/> reaches it, these rows and every row queued before them are stored.
    /// </summary>
    public long Enqueue(IReadOnlyList<MeasurementOutcomeUpdate> outcomes, IReadOnlyList<FusedStateRow> states)
    {
        ArgumentNullException.ThrowIfNull(outcomes);
        ArgumentNullException.ThrowIfNull(states);
        if (outcomes.Count == 0 && states.Count == 0)
        {
            return LastTicket;
        }

        Interlocked.Add(ref _queuedRows, outcomes.Count + states.Count);
        lock (_enqueueGate)
        {
            long ticket = Interlocked.Increment(ref _tickets);
            if (!_channel.Writer.TryWrite((outcomes, states, ticket)))
            {
                throw new InvalidOperationException("the track write queue is closed");
            }

            _spans.Queued(ticket, outcomes.Count, states.Count);
            return ticket;
        }
    }

    /// <summary>Completes with true once <see cref="WrittenThrough"/> reaches <paramref name="ticket"/>, false when <paramref name="cancellationToken"/> fires first.</summary>
    public async Task<bool> WaitWrittenAsync(long ticket, CancellationToken cancellationToken)
    {
        while (WrittenThrough < ticket)
        {
            Task written;
            lock (_roomGate)
            {
                written = _written.Task;
            }

            if (WrittenThrough >= ticket)
            {
                break;
            }

            try
            {
                await written.WaitAsync(cancellationToken).ConfigureAwait(false);
            }
            catch (OperationCanceledException) when (cancellationToken.IsCancellationRequested)
            {
                return false;
            }
        }

        return true;
    }

    /// <summary>Completes when fewer than <see cref="TrackGrainOptions.WriteQueueCapacity"/> rows are queued.</summary>
    /// <param name="cancellationToken">Stops waiting.</param>
    public async Task WaitForRoomAsync(CancellationToken cancellationToken = default)
    {
        while (QueuedRows >= _options.WriteQueueCapacity)
        {
            Task written;
            lock (_roomGate)
            {
                written = _written.Task;
            }

            // Re-check after taking the signal, so a write that finished in between is not missed.
            if (QueuedRows < _options.WriteQueueCapacity)
            {
                return;
            }

            await written.WaitAsync(cancellationToken).ConfigureAwait(false);
        }
    }

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
            _readThrough = item.Ticket;
        }

        // The two writes touch different tables: run them at once on two connections. Each list is cleared only
        // when its own write succeeded, so a failed one is retried with the same rows at the next flush.
        await Task.WhenAll(WriteOutcomesAsync(cancellationToken), WriteStatesAsync(cancellationToken)).ConfigureAwait(false);
        AllWritten();
    }

    /// <summary>Every row taken from the channel so far is written (or dropped for good): move <see cref="WrittenThrough"/>.</summary>
    private void AllWritten()
    {
        Interlocked.Exchange(ref _writtenThrough, _readThrough);
        _spans.Written(_readThrough);
        Signal();
    }

    private async Task WriteOutcomesAsync(CancellationToken cancellationToken)
    {
        if (_outcomes.Count > 0)
        {
            await MeasurementVerdictWriter.WriteAsync(_database.DataSource, _outcomes, cancellationToken).ConfigureAwait(false);
            Written(_outcomes.Count);
            _outcomes.Clear();
        }
    }

    private async Task WriteStatesAsync(CancellationToken cancellationToken)
    {
        if (_states.Count > 0)
        {
            await FusedStateUpserter.UpsertAsync(_database.DataSource, _states, cancellationToken).ConfigureAwait(false);
            Written(_states.Count);
            _states.Clear();
        }
    }

    private void Written(int rows)
    {
        Interlocked.Add(ref _queuedRows, -rows);
        Signal();
    }

    private void Signal()
    {
        TaskCompletionSource done;
        lock (_roomGate)
        {
            done = _written;
            _written = new TaskCompletionSource(TaskCreationOptions.RunContinuationsAsynchronously);
        }

        done.TrySetResult();
    }

    /// <inheritdoc />
    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        while (!stoppingToken.IsCancellationRequested)
        {
            try
            {
                await Task.Delay(_options.FlushIntervalMs, stoppingToken).ConfigureAwait(false);
            }
            catch (OperationCanceledException)
            {
                break;
            }

            // A write in progress is never cut short by the stop: a cancelled COPY can surface as an Npgsql or IO
            // error rather than a cancellation, and the rows must be drained below either way.
            await FlushOnceAsync(CancellationToken.None).ConfigureAwait(false);
        }

        await DrainAsync().ConfigureAwait(false);
    }

    /// <summary>
    /// Writes everything still queued at a stop, retrying for up to <see cref="TrackGrainOptions.DrainTimeoutS"/>
    /// while the store refuses. Rows still unwritten after that are logged; their measurements stay pending in the
    /// store and are judged again when their track next activates.
    /// </summary>
    private async Task DrainAsync()
    {
        using var drain = new CancellationTokenSource(TimeSpan.FromSeconds(_options.DrainTimeoutS));
        while (QueuedRows > 0 && !drain.IsCancellationRequested)
        {
            if (await FlushOnceAsync(drain.Token).ConfigureAwait(false))
            {
                continue;
            }

            await Task.Delay(Math.Max(_options.FlushIntervalMs, 100), drain.Token).ConfigureAwait(ConfigureAwaitOptions.SuppressThrowing);
        }

        if (QueuedRows > 0)
        {
            _logger.LogError(
                "Stopped with {Rows} outcome and fused-state rows unwritten; their measurements are judged again when their tracks activate",
                QueuedRows);
        }
    }

    /// <summary>One flush; false when it failed (logged, rows kept for the next one).</summary>
    private async Task<bool> FlushOnceAsync(CancellationToken cancellationToken)
    {
        bool writing = QueuedRows > 0;
        try
        {
            await FlushAsync(cancellationToken).ConfigureAwait(false);
            if (writing)
            {
                _database.NoteSuccess();
            }

            return true;
        }
        catch (OperationCanceledException) when (cancellationToken.IsCancellationRequested)
        {
            return false;
        }
        catch (Exception ex) when (TransientDatabaseError.Is(ex) || ex is IOException)
        {
            if (_database.NoteFailure(ex))
            {
                _logger.LogDebug(ex, "Writing {Outcomes} outcomes and {States} fused states failed; retrying", _outcomes.Count, _states.Count);
            }
            else
            {
                _logger.LogWarning(ex, "Writing {Outcomes} outcomes and {States} fused states failed; retrying", _outcomes.Count, _states.Count);
            }
            return false;
        }
        catch (ArgumentException ex)
        {
            // Rows the store refuses before sending can never succeed: log and drop them rather than stop the host.
            _logger.LogError(ex, "Dropped {Outcomes} outcomes and {States} fused states the store refused", _outcomes.Count, _states.Count);
            Written(_outcomes.Count + _states.Count);
            _outcomes.Clear();
            _states.Clear();
            AllWritten();
            return true;
        }
    }
}
