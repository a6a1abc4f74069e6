// Folds the small chunks of windows no commit wrote into for a while (MeasurementChunkFolder), in the background.
using FusionService.Operations;
using FusionService.Storage.Measurements;

namespace FusionService.Database;

/// <summary>
/// Every <see cref="DatabaseOptions.ChunkFoldIntervalS"/> seconds, folds the windows this process wrote into that no
/// commit of it wrote into for <see cref="DatabaseOptions.ChunkFoldDelayS"/> seconds (<see cref="MeasurementChunkFolder"/>),
/// at most <see cref="WindowsPerFold"/> in one transaction. A live van's window is left alone from its end on; a window
/// that a backlog upload or a gateway is still filling waits until the writing stops. The queue is in memory, so a
/// graceful stop folds what it holds at once, without the wait, for at most <see cref="StopFoldLimit"/> (a window
/// another process goes on writing into is folded again later, by that process); after a crash the windows written in
/// the last <see cref="DatabaseOptions.ChunkFoldDelayS"/> seconds stay unfolded (correct, only larger).
/// </summary>
internal sealed class ChunkFoldService(
    FusionDatabase database, ChunkFoldQueue queue, ServiceMetrics metrics, TimeProvider time, ILogger<ChunkFoldService> logger) : BackgroundService
{
    /// <summary>Windows folded in one transaction at most.</summary>
    internal const int WindowsPerFold = 200;

    /// <summary>How long a graceful stop folds the windows still queued at most.</summary>
    internal static readonly TimeSpan StopFoldLimit = TimeSpan.FromSeconds(10);

    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        if (database.Options.ChunkFoldDelayS == 0)
        {
            return;
        }

        var interval = TimeSpan.FromSeconds(database.Options.ChunkFoldIntervalS);
        while (!stoppingToken.IsCancellationRequested)
        {
            try
            {
                await Task.Delay(interval, time, stoppingToken).ConfigureAwait(false);
                await FoldQuietAsync(stoppingToken).ConfigureAwait(false);
            }
            catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
            {
                return;
            }
        }
    }

    /// <summary>Stops the loop, then folds every window still queued (see the remarks on the class).</summary>
    public override async Task StopAsync(CancellationToken cancellationToken)
    {
        await base.StopAsync(cancellationToken).ConfigureAwait(false);
        if (database.Options.ChunkFoldDelayS == 0 || queue.Count == 0)
        {
            return;
        }

        using var limit = CancellationTokenSource.CreateLinkedTokenSource(cancellationToken);
        limit.CancelAfter(StopFoldLimit);
        try
        {
            await FoldAsync(queue.TakeQuiet(TimeSpan.Zero), limit.Token).ConfigureAwait(false);
        }
        catch (OperationCanceledException)
        {
            logger.LogWarning("Stopping: the fold of the queued windows was cut off after {Seconds} s; the rest stay unfolded", StopFoldLimit.TotalSeconds);
        }
    }

    /// <summary>Folds every window left alone long enough, in transactions of at most <see cref="WindowsPerFold"/>.</summary>
    internal Task FoldQuietAsync(CancellationToken cancellationToken) =>
        FoldAsync(queue.TakeQuiet(TimeSpan.FromSeconds(database.Options.ChunkFoldDelayS)), cancellationToken);

    private async Task FoldAsync(List<(Guid FleetId, string VehicleId, long Window)> quiet, CancellationToken cancellationToken)
    {
        for (int start = 0; start < quiet.Count; start += WindowsPerFold)
        {
            var part = quiet.GetRange(start, Math.Min(WindowsPerFold, quiet.Count - start));
            try
            {
                var result = await MeasurementChunkFolder.FoldAsync(database.DataSource, part, cancellationToken).ConfigureAwait(false);
                if (result is not { } done)
                {
                    // Another process is folding: these windows wait for the next pass.
                    queue.Return(quiet.Skip(start));
                    return;
                }

                metrics.CountFold(done);
            }
            catch (Exception ex) when (ex is Npgsql.NpgsqlException or InvalidOperationException)
            {
                logger.LogWarning(ex, "Folding {Windows} windows failed; they wait for the next pass", quiet.Count - start);
                queue.Return(quiet.Skip(start));
                return;
            }
        }
    }
}
