// Readiness: PostgreSQL reachable, migrations applied, Orleans up.
using FusionService.Database;
using FusionService.Storage.Failures;
using Microsoft.Extensions.Diagnostics.HealthChecks;
using Npgsql;

namespace FusionService.Operations;

/// <summary>Ready when PostgreSQL answers, every migration this build knows is recorded, and the silo is active.</summary>
internal sealed partial class ReadinessHealthCheck(FusionDatabase database, SiloStatus silo, ILogger<ReadinessHealthCheck> logger) : IHealthCheck
{
    public async Task<HealthCheckResult> CheckHealthAsync(HealthCheckContext context, CancellationToken cancellationToken = default)
    {
        if (!silo.IsActive)
        {
            return HealthCheckResult.Unhealthy("the Orleans silo is not active");
        }

        try
        {
            var connection = await database.DataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
            await using (connection.ConfigureAwait(false))
            {
                await using var command = new NpgsqlCommand("SELECT version FROM schema_migrations", connection);
                var applied = new HashSet<string>(StringComparer.Ordinal);
                var reader = await command.ExecuteReaderAsync(cancellationToken).ConfigureAwait(false);
                await using (reader.ConfigureAwait(false))
                {
                    while (await reader.ReadAsync(cancellationToken).ConfigureAwait(false))
                    {
                        applied.Add(reader.GetString(0));
                    }
                }

                var missing = FusionDatabase.RequiredMigrations.Where(v => !applied.Contains(v)).ToList();
                return missing.Count == 0
                    ? HealthCheckResult.Healthy("PostgreSQL reachable, migrations applied, silo active")
                    : HealthCheckResult.Unhealthy("migrations not applied: " + string.Join(", ", missing));
            }
        }
        catch (Exception ex) when (TransientDatabaseError.Is(ex))
        {
            // The exception's message can name hosts, users or database objects: it goes to the log, not to whoever
            // can reach this unauthenticated endpoint.
            LogUnreachable(logger, ex);
            database.NoteFailure(ex);
            return HealthCheckResult.Unhealthy("PostgreSQL unreachable");
        }
    }

    [LoggerMessage(Level = LogLevel.Warning, Message = "Readiness: PostgreSQL unreachable")]
    private static partial void LogUnreachable(ILogger logger, Exception exception);
}
