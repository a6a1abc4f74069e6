// Keeps the daily partitions around today in place.
namespace FusionService.Database;

/// <summary>Runs partition maintenance every <see cref="DatabaseOptions.PartitionMaintenanceIntervalS"/> seconds.</summary>
internal sealed class PartitionMaintenanceService(FusionDatabase database, ILogger<PartitionMaintenanceService> logger) : BackgroundService
{
    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        var interval = TimeSpan.FromSeconds(database.Options.PartitionMaintenanceIntervalS);
        while (!stoppingToken.IsCancellationRequested)
        {
            try
            {
                await Task.Delay(interval, stoppingToken).ConfigureAwait(false);
                await database.CreatePartitions().RunAsync(stoppingToken).ConfigureAwait(false);
            }
            catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
            {
                return;
            }
            catch (Exception ex) when (ex is Npgsql.NpgsqlException or InvalidOperationException)
            {
                logger.LogWarning(ex, "Partition maintenance failed; retrying at the next interval");
            }
        }
    }
}
