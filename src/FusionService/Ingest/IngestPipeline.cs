// Validate, commit durably, hand to the vehicle track grains.
using System.Text.Json;
using FusionService.Audit;
using FusionService.Database;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Time;
using FusionService.Estimation.Tracking;
using FusionService.Operations;
using FusionService.Storage.Measurements;
using FusionService.Tracking;
using Microsoft.Extensions.Options;

namespace FusionService.Ingest;

/// <summary>
/// The ingest path shared by HTTP and WebSocket: validates each message on its own, commits the valid ones through
/// the <see cref="GroupCommitWriter"/>, answers accepted / duplicate / rejected per message, and hands the newly
/// stored measurements to their vehicles' track grains through the <see cref="TrackDispatcher"/> (answering after the
/// commit or after the tracks too, by <see cref="IngestOptions.AcknowledgeAfter"/>). A duplicate whose stored outcome
/// is still pending (its first commit's answer was lost) is handed to its track too.
/// </summary>
public sealed class IngestPipeline(
    GroupCommitWriter writer,
    TrackDispatcher tracks,
    IOptions<IngestOptions> options,
    IOptions<DatabaseOptions> database,
    ServiceMetrics metrics,
    TimeProvider time,
    DuplicateCounter duplicates,
    FusionDatabase store,
    Fleets.FleetVehicleQuota quota)
{
    /// <summary>A parser with the accepted time window as of now.</summary>
    public TelemetryMessageParser CreateParser()
    {
        long nowUs = UnixMicroseconds.Now(time);
        var today = DateOnly.FromDateTime(time.GetUtcNow().UtcDateTime);
        long minUs = UnixMicroseconds.StartOfUtcDay(today.AddDays(-database.Value.DaysBack));
        return new TelemetryMessageParser(options.Value, minUs, nowUs + (long)(options.Value.MaxFutureSkewS * 1e6));
    }

    /// <summary>
    /// Ingests <paramref name="messages"/> for <paramref name="fleetId"/>: each entry is a JSON message or, for an
    /// NDJSON line that was not valid JSON, the reason.
    /// </summary>
    /// <exception cref="ServiceUnavailableException">The write queue is full or the database is unavailable; nothing was acknowledged.</exception>
    public async Task<IngestResponse> IngestAsync(Guid fleetId, IReadOnlyList<(JsonElement Message, string? SyntaxError)> messages, CancellationToken cancellationToken)
    {
        var parser = CreateParser();
        var results = new IngestMessageResult?[messages.Count];
        var parsed = new ParsedMessage?[messages.Count];
        var rows = new List<MeasurementRow>();
        var received = time.GetUtcNow().UtcDateTime;
        for (int i = 0; i < messages.Count; i++)
        {
            if (messages[i].SyntaxError is { } syntax)
            {
                results[i] = new IngestMessageResult(i, "rejected", string.Empty, syntax);
                continue;
            }

            var message = parser.Parse(messages[i].Message, out var rejection);
            if (message is null)
            {
                results[i] = new IngestMessageResult(i, "rejected", rejection!.Field, rejection.Reason);
                continue;
            }

            parsed[i] = message;
            foreach (var m in message.Measurements)
            {
                rows.Add(MeasurementRows.ToRow(fleetId, message.VehicleId, m, received));
            }
        }

        await ApplyQuotaAsync(fleetId, parsed, results, rows, cancellationToken).ConfigureAwait(false);
        var committed = await writer.CommitAsync(rows).ConfigureAwait(false);
        var inserted = committed.Inserted;
        var fresh = new Dictionary<string, List<TrackMeasurement>>(StringComparer.Ordinal);
        int accepted = 0, duplicate = 0, rejected = 0;
        var repeated = new List<ParsedMessage>();
        for (int i = 0; i < messages.Count; i++)
        {
            if (parsed[i] is not { } message)
            {
                rejected++;
                continue;
            }

            var first = MeasurementRows.ToRow(fleetId, message.VehicleId, message.Measurements[0], received);
            if (inserted.Remove(MeasurementKey.Of(first)))
            {
                accepted++;
                results[i] = new IngestMessageResult(i, "accepted", DroppedFields: Dropped(message));
                if (!fresh.TryGetValue(message.VehicleId, out var list))
                {
                    fresh[message.VehicleId] = list = [];
                }

                foreach (var m in message.Measurements)
                {
                    list.Add(TrackMeasurement.From(m));
                }
            }
            else
            {
                duplicate++;
                results[i] = new IngestMessageResult(i, "duplicate", DroppedFields: Dropped(message));
                repeated.Add(message);
            }
        }

        metrics.CountMessages(messages, results);
        await duplicates.RecordAsync(fleetId, repeated).ConfigureAwait(false);
        await AddPendingAsync(fleetId, repeated, received, fresh).ConfigureAwait(false);
        var processed = await tracks.DispatchAsync(fleetId, fresh, vehicleId => committed.TransactionIdOf(fleetId, vehicleId)).ConfigureAwait(false);
        if (options.Value.AcknowledgeAfter == AcknowledgeAfter.Tracking)
        {
            await processed.ConfigureAwait(false);
        }

        return new IngestResponse(accepted, duplicate, rejected, results!);
    }

    /// <summary>
    /// Rejects the messages of new vehicles beyond the fleet's vehicle quota (field vehicle, the quota named) and drops
    /// their rows from <paramref name="rows"/>.
    /// </summary>
    private async Task ApplyQuotaAsync(Guid fleetId, ParsedMessage?[] parsed, IngestMessageResult?[] results, List<MeasurementRow> rows, CancellationToken cancellationToken)
    {
        var vehicles = new HashSet<string>(StringComparer.Ordinal);
        foreach (var message in parsed)
        {
            if (message is not null)
            {
                vehicles.Add(message.VehicleId);
            }
        }

        if (vehicles.Count == 0)
        {
            return;
        }

        (IReadOnlySet<string> Refused, int Quota) admitted;
        try
        {
            admitted = await quota.AdmitAsync(fleetId, vehicles, cancellationToken).ConfigureAwait(false);
        }
        catch (Npgsql.NpgsqlException ex)
        {
            store.NoteFailure(ex);
            throw new ServiceUnavailableException("the fleet's vehicle quota cannot be checked (database unavailable)", ex);
        }

        if (admitted.Refused.Count == 0)
        {
            return;
        }

        string reason = string.Create(
            System.Globalization.CultureInfo.InvariantCulture,
            $"the fleet's vehicle quota of {admitted.Quota} vehicles is reached and this vehicle is new (quota: PUT /v1/fleet/quota with an admin key; default Tenancy:DefaultMaxVehicles)");
        for (int i = 0; i < parsed.Length; i++)
        {
            if (parsed[i] is { } message && admitted.Refused.Contains(message.VehicleId))
            {
                parsed[i] = null;
                results[i] = new IngestMessageResult(i, "rejected", "vehicle", reason);
            }
        }

        rows.RemoveAll(r => admitted.Refused.Contains(r.VehicleId));
    }

    /// <summary>
    /// Adds to <paramref name="fresh"/> the measurements of resent messages whose stored outcome is still pending:
    /// their first commit reached the server but its answer did not reach the client (503), so no track was handed
    /// them then. A track that has them already answers a repeat as a duplicate.
    /// </summary>
    private async Task AddPendingAsync(Guid fleetId, List<ParsedMessage> repeated, DateTime received, Dictionary<string, List<TrackMeasurement>> fresh)
    {
        if (repeated.Count == 0)
        {
            return;
        }

        var keys = new List<MeasurementKey>();
        foreach (var message in repeated)
        {
            foreach (var m in message.Measurements)
            {
                keys.Add(MeasurementKey.Of(MeasurementRows.ToRow(fleetId, message.VehicleId, m, received)));
            }
        }

        HashSet<MeasurementKey> pending;
        try
        {
            pending = await new MeasurementRepository(store.DataSource).PendingAmongAsync(keys).ConfigureAwait(false);
        }
        catch (Npgsql.NpgsqlException ex)
        {
            // The duplicate answer is still right; the pending rows are judged when the track next activates.
            store.NoteFailure(ex);
            return;
        }

        foreach (var message in repeated)
        {
            foreach (var m in message.Measurements)
            {
                if (pending.Contains(MeasurementKey.Of(MeasurementRows.ToRow(fleetId, message.VehicleId, m, received))))
                {
                    if (!fresh.TryGetValue(message.VehicleId, out var list))
                    {
                        fresh[message.VehicleId] = list = [];
                    }

                    list.Add(TrackMeasurement.From(m));
                }
            }
        }
    }

    private static IReadOnlyList<DroppedField>? Dropped(ParsedMessage message) =>
        message.DroppedFields.Count > 0 ? message.DroppedFields : null;
}
