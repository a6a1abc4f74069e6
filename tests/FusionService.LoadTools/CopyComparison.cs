// The raw binary COPY rate of the rows a load run posted, as the yardstick for the ingest path.
using System.Diagnostics;
using System.Globalization;
using System.Text.Json;
using FusionService.Database;
using FusionService.Estimation.Time;
using FusionService.Ingest;
using FusionService.Simulator.Load;
using Microsoft.Extensions.Configuration;
using FusionService.Simulator.Messages;
using FusionService.Storage.Measurements;
using FusionService.Storage.Partitions;
using Microsoft.Extensions.Logging.Abstractions;
using Microsoft.Extensions.Options;
using Npgsql;

namespace FusionService.LoadTools;

/// <summary>
/// Stores the very rows a load run posted (the same synthetic batches, parsed by the service's own parser) with plain
/// binary COPY into an empty scratch schema of the same database, one transaction per <see cref="ChunkRows"/> rows on
/// one connection, and reports rows per second. The scratch schema is dropped afterwards. The service's path does more
/// per row (HTTP, JSON, duplicate detection with <c>ON CONFLICT ... RETURNING</c>, outcome updates, fused states) and
/// writes into tables that already hold data, so the ratio of the two rates is the price of that work.
/// </summary>
public static class CopyComparison
{
    /// <summary>Rows per COPY transaction (about what one group commit holds under load).</summary>
    public const int ChunkRows = 5_000;

    /// <summary>Runs the comparison for batches 0 to <paramref name="batches"/> - 1 of <paramref name="options"/>.</summary>
    /// <returns>Rows copied and the rate, rows per second.</returns>
    public static async Task<(long Rows, double RowsPerSecond)> RunAsync(
        IConfiguration configuration, LoadGeneratorOptions options, long batches, TextWriter output, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(configuration);
        ArgumentNullException.ThrowIfNull(options);
        ArgumentNullException.ThrowIfNull(output);
        var databaseOptions = new DatabaseOptions();
        configuration.GetSection(DatabaseOptions.Section).Bind(databaseOptions);
        string schema = "load_copy_" + Convert.ToHexStringLower(System.Security.Cryptography.RandomNumberGenerator.GetBytes(4));
        databaseOptions.Schema = schema;
        var database = new FusionDatabase(configuration, Options.Create(databaseOptions), NullLoggerFactory.Instance);
        await using (database.ConfigureAwait(false))
        {
            await database.StartAsync(attachToRunningEmbedded: true, cancellationToken).ConfigureAwait(false);
            try
            {
                var rows = Rows(options, batches);
                long minUs = rows.Min(r => r.TimeUs), maxUs = rows.Max(r => r.TimeUs);
                await new PartitionMaintainer(database.DataSource).EnsurePartitionsAsync(
                    UnixMicroseconds.UtcDayOf(minUs),
                    UnixMicroseconds.UtcDayOf(maxUs),
                    cancellationToken).ConfigureAwait(false);
                await output.WriteLineAsync(string.Create(CultureInfo.InvariantCulture, $"copying the same {rows.Count:N0} rows with binary COPY into scratch schema {schema}")).ConfigureAwait(false);
                var connection = await database.DataSource.OpenConnectionAsync(cancellationToken).ConfigureAwait(false);
                await using (connection.ConfigureAwait(false))
                {
                    var clock = Stopwatch.StartNew();
                    for (int from = 0; from < rows.Count; from += ChunkRows)
                    {
                        var transaction = await connection.BeginTransactionAsync(cancellationToken).ConfigureAwait(false);
                        await using (transaction.ConfigureAwait(false))
                        {
                            await MeasurementWriter.WriteAsync(connection, transaction, rows.GetRange(from, Math.Min(ChunkRows, rows.Count - from)), cancellationToken).ConfigureAwait(false);
                            await transaction.CommitAsync(cancellationToken).ConfigureAwait(false);
                        }
                    }

                    clock.Stop();
                    return (rows.Count, rows.Count / clock.Elapsed.TotalSeconds);
                }
            }
            finally
            {
                await using var connection = await database.DataSource.OpenConnectionAsync(CancellationToken.None).ConfigureAwait(false);
                await using var drop = new NpgsqlCommand("DROP SCHEMA " + schema + " CASCADE", connection);
                await drop.ExecuteNonQueryAsync(CancellationToken.None).ConfigureAwait(false);
            }
        }
    }

    private static List<MeasurementRow> Rows(LoadGeneratorOptions options, long batches)
    {
        var parser = new TelemetryMessageParser(new IngestOptions(), long.MinValue, long.MaxValue);
        var fleetId = Guid.NewGuid();
        var received = DateTime.UtcNow;
        var rows = new List<MeasurementRow>((int)Math.Min(int.MaxValue, batches * options.BatchSize));
        for (int b = 0; b < batches; b++)
        {
            foreach (var message in LoadGenerator.SyntheticBatch(options, b))
            {
                using var document = JsonDocument.Parse(TelemetryJson.SerializeToUtf8Bytes(message));
                var parsed = parser.Parse(document.RootElement, out var rejection)
                    ?? throw new InvalidOperationException("synthetic message refused: " + rejection!.Field + " " + rejection.Reason);
                foreach (var m in parsed.Measurements)
                {
                    rows.Add(MeasurementRows.ToRow(fleetId, parsed.VehicleId, m, received));
                }
            }
        }

        return rows;
    }
}
