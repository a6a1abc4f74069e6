// Counts duplicate deliveries for the diagnostics (the measurement log drops them).
using FusionService.Database;
using FusionService.Estimation.Time;
using FusionService.Ingest;
using FusionService.Storage.Audit;
using FusionService.Storage.Failures;

namespace FusionService.Audit;

/// <summary>
/// Adds the duplicate messages of one ingest request to <c>duplicate_counts</c>, one count per measurement (a GNSS
/// message with speed counts for gnss_position and gnss_velocity), on the UTC day of its measurement time.
/// </summary>
public sealed class DuplicateCounter(FusionDatabase database, ILogger<DuplicateCounter> logger)
{
    /// <summary>
    /// Records <paramref name="duplicates"/> of <paramref name="fleetId"/>. The messages themselves were stored before,
    /// so a failure here loses only the count: it is logged, not thrown, and the ingest answer stands.
    /// </summary>
    public async Task RecordAsync(Guid fleetId, IReadOnlyCollection<ParsedMessage> duplicates)
    {
        ArgumentNullException.ThrowIfNull(duplicates);
        if (duplicates.Count == 0)
        {
            return;
        }

        var counts = duplicates.SelectMany(d => d.Measurements.Select(m =>
            new DuplicateCount(fleetId, d.VehicleId, (short)m.Kind, UnixMicroseconds.UtcDayOf(m.TimeUs), 1)));
        try
        {
            await new DuplicateCountRepository(database.DataSource).AddAsync(fleetId, counts.ToList()).ConfigureAwait(false);
        }
        catch (Exception ex) when (TransientDatabaseError.Is(ex))
        {
            database.NoteFailure(ex);
            logger.LogWarning(ex, "Could not count {Count} duplicate messages of fleet {Fleet}", duplicates.Count, fleetId);
        }
    }
}
