// Ends open WebSocket streams whose API key is revoked or expires.
using FusionService.Database;
using FusionService.Storage.Failures;
using FusionService.Storage.Fleets;
using Microsoft.Extensions.Options;
using Npgsql;

namespace FusionService.Security;

/// <summary>
/// Keeps the keys of the open WebSocket streams of this process. A stream takes a <see cref="StreamKeyLease"/> whose token is
/// cancelled when its key expires (timed from the key's expiry), when it is revoked or rotated through this process
/// (<see cref="KeyRetired"/>, at once), or when a check every <see cref="SecurityOptions.StreamKeyRecheckSeconds"/> (one
/// query for every watched key) finds it revoked or expired by another process; the stream then closes with 1008.
/// </summary>
public sealed class StreamKeyWatch(
    FusionDatabase database, IOptions<SecurityOptions> options, TimeProvider time, ILogger<StreamKeyWatch> logger) : BackgroundService
{
    private readonly Lock _gate = new();
    private readonly Dictionary<Guid, Entry> _keys = [];

    /// <summary>Watches the key of <paramref name="caller"/> until the lease is disposed.</summary>
    public StreamKeyLease Watch(ApiCaller caller)
    {
        ArgumentNullException.ThrowIfNull(caller);
        lock (_gate)
        {
            if (!_keys.TryGetValue(caller.KeyId, out var entry))
            {
                entry = new Entry(new CancellationTokenSource());
                _keys[caller.KeyId] = entry;
                if (caller.ExpiresAt is { } expires)
                {
                    var left = expires - time.GetUtcNow();
                    if (left <= TimeSpan.Zero)
                    {
                        entry.Lost.Cancel();
                    }
                    else if (left < TimeSpan.FromDays(24))
                    {
                        entry.Lost.CancelAfter(left);
                    }
                }
            }

            entry.Streams++;
            return new StreamKeyLease(() => Release(caller.KeyId), entry.Lost.Token);
        }
    }

    /// <summary>Ends the streams of <paramref name="keyId"/> now (called after a revocation or rotation through this process).</summary>
    public void KeyRetired(Guid keyId)
    {
        lock (_gate)
        {
            if (_keys.TryGetValue(keyId, out var entry))
            {
                entry.Lost.Cancel();
            }
        }
    }

    /// <summary>Keys watched now (for tests and logs).</summary>
    public int WatchedKeys
    {
        get
        {
            lock (_gate)
            {
                return _keys.Count;
            }
        }
    }

    /// <summary>Checks every watched key once: those no longer active end their streams.</summary>
    public async Task CheckAsync(CancellationToken cancellationToken)
    {
        Guid[] ids;
        lock (_gate)
        {
            ids = [.. _keys.Where(k => !k.Value.Lost.IsCancellationRequested).Select(k => k.Key)];
        }

        if (ids.Length == 0)
        {
            return;
        }

        var active = await new FleetAdmin(database.DataSource).ActiveKeysAmongAsync(ids, cancellationToken).ConfigureAwait(false);
        foreach (var id in ids)
        {
            if (!active.Contains(id))
            {
                logger.LogInformation("API key {KeyId} is revoked or expired; closing its open streams", id);
                KeyRetired(id);
            }
        }
    }

    /// <inheritdoc />
    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        using var timer = new PeriodicTimer(TimeSpan.FromSeconds(options.Value.StreamKeyRecheckSeconds), time);
        try
        {
            while (await timer.WaitForNextTickAsync(stoppingToken).ConfigureAwait(false))
            {
                try
                {
                    await CheckAsync(stoppingToken).ConfigureAwait(false);
                }
                catch (Exception ex) when (TransientDatabaseError.Is(ex))
                {
                    database.NoteFailure(ex);
                    logger.LogWarning("Could not re-check the keys of open streams ({Reason}); retrying at the next tick", ex.GetBaseException().Message);
                }
                catch (Exception ex) when (ex is not OperationCanceledException || !stoppingToken.IsCancellationRequested)
                {
                    // A defect, but one check's: an exception leaving a background service would stop the host.
                    logger.LogError(ex, "Re-checking the keys of open streams failed unexpectedly; retrying at the next tick");
                }
            }
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
            // Stopping.
        }
    }

    private void Release(Guid keyId)
    {
        lock (_gate)
        {
            if (_keys.TryGetValue(keyId, out var entry) && --entry.Streams == 0)
            {
                _keys.Remove(keyId);
                entry.Lost.Dispose();
            }
        }
    }

    private sealed class Entry(CancellationTokenSource lost)
    {
        public CancellationTokenSource Lost { get; } = lost;

        public int Streams { get; set; }
    }
}
