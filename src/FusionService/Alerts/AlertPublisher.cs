// Writes alert changes (with their webhook outbox rows) and publishes them to the live hub.
using System.Text.Json;
using FusionService.Database;
using FusionService.Live;
using FusionService.Storage.Alerts;
using FusionService.Storage.Failures;
using Npgsql;

namespace FusionService.Alerts;

/// <summary>
/// The one writer of alerts: applies observations through <see cref="AlertRepository.ApplyAsync"/> (the alert and its
/// webhook outbox rows in one transaction), then offers each change to the <see cref="LiveHub"/> and wakes the
/// <see cref="WebhookDispatcher"/>.
/// </summary>
public sealed class AlertPublisher(
    FusionDatabase database, LiveHub hub, WebhookDispatcher dispatcher, AlertRuleCache rules, VehicleActivity activity, ILogger<AlertPublisher> logger)
{
    /// <summary>The rule settings cache.</summary>
    public AlertRuleCache Rules => rules;

    /// <summary>The live hub.</summary>
    public LiveHub Hub => hub;

    /// <summary>Receipt times per vehicle.</summary>
    public VehicleActivity Activity => activity;

    /// <summary>The webhook body of a stored alert: the API's alert JSON.</summary>
    public static string PayloadOf(AlertRow row) => JsonSerializer.Serialize(AlertResponse.From(row, withCaution: true), AlertJson.Options);

    /// <summary>A monitor for one vehicle's track grain.</summary>
    public VehicleAlertMonitor CreateMonitor(Guid fleetId, string vehicleId) => new(this, fleetId, vehicleId);

    /// <summary>Applies <paramref name="observations"/>; false (logged) when the store cannot be written, so the caller keeps them for a retry.</summary>
    public async Task<bool> ApplyAsync(Guid fleetId, string vehicleId, IReadOnlyList<AlertObservation> observations, CancellationToken cancellationToken = default)
    {
        AlertApplyResult result;
        try
        {
            result = await new AlertRepository(database.DataSource).ApplyAsync(fleetId, vehicleId, observations, PayloadOf, cancellationToken).ConfigureAwait(false);
        }
        catch (Exception ex) when (TransientDatabaseError.Is(ex))
        {
            database.NoteFailure(ex);
            logger.LogWarning(ex, "Alerts of {Fleet}/{Vehicle} could not be stored; they are kept for the next batch", fleetId, vehicleId);
            return false;
        }

        Publish(result.Changed);
        if (result.Deliveries > 0)
        {
            dispatcher.Wake();
        }

        return true;
    }

    /// <summary>Offers stored alert changes to the stream subscribers.</summary>
    public void Publish(IEnumerable<AlertRow> changed)
    {
        ArgumentNullException.ThrowIfNull(changed);
        foreach (var row in changed)
        {
            hub.PublishAlert(AlertResponse.From(row, withCaution: true));
        }
    }
}
