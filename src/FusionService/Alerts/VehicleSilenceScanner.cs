// Periodic scan for vehicles that stopped sending.
using System.Globalization;
using System.Text.Json.Nodes;
using FusionService.Database;
using FusionService.Storage.Alerts;
using FusionService.Storage.Failures;
using Microsoft.Extensions.Options;
using Npgsql;

namespace FusionService.Alerts;

/// <summary>
/// Background service for <c>vehicle_silent</c>: every <see cref="AlertOptions.SilenceScanIntervalMs"/> it compares each
/// known vehicle's newest receipt (<see cref="VehicleActivity"/>, seeded at start from the store's
/// <c>measurements.received_at</c> of the last <see cref="AlertOptions.SilenceLookbackHours"/>) with the server clock
/// and the fleet's <see cref="VehicleSilentRule"/>: a silent vehicle gets (or keeps) an open alert, a vehicle heard from
/// again has it resolved at the next scan (the alert is written only when that changes). Alert times here are
/// server-clock times. Vehicles silent for longer than <see cref="AlertOptions.SilenceLookbackHours"/> are evicted from
/// <see cref="VehicleActivity"/> (their open alert stays open: they are still silent). A vehicle heard from while it had
/// no entry (new, evicted, or sending again after a restart before the first scan) has any open silence alert resolved
/// at the next scan, one store lookup per such vehicle.
/// </summary>
public sealed class VehicleSilenceScanner(
    FusionDatabase database, AlertPublisher publisher, IOptions<AlertOptions> options, TimeProvider time, ILogger<VehicleSilenceScanner> logger) : BackgroundService
{
    private readonly HashSet<(Guid, string)> _silent = [];
    private bool _seeded;

    /// <inheritdoc />
    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        using var timer = new PeriodicTimer(TimeSpan.FromMilliseconds(options.Value.SilenceScanIntervalMs), time);
        try
        {
            while (await timer.WaitForNextTickAsync(stoppingToken).ConfigureAwait(false))
            {
                try
                {
                    await ScanAsync(stoppingToken).ConfigureAwait(false);
                }
                catch (Exception ex) when (TransientDatabaseError.Is(ex))
                {
                    logger.LogWarning(ex, "Silent-vehicle scan failed; retrying at the next tick");
                }
                catch (Exception ex) when (ex is not OperationCanceledException || !stoppingToken.IsCancellationRequested)
                {
                    // Any other failure is a defect, but one scan's: an exception leaving a background service stops the
                    // whole host, ingest included. Logged as an error, tried again at the next tick.
                    logger.LogError(ex, "Silent-vehicle scan failed unexpectedly; retrying at the next tick");
                }
            }
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
            // Stopping.
        }
    }

    /// <summary>One scan (also used by tests through the hosted instance's timer).</summary>
    private async Task ScanAsync(CancellationToken cancellationToken)
    {
        var now = time.GetUtcNow();
        if (!_seeded)
        {
            foreach (var r in await new AlertRepository(database.DataSource).NewestReceiptsAsync(now.AddHours(-options.Value.SilenceLookbackHours), cancellationToken).ConfigureAwait(false))
            {
                publisher.Activity.Seed(r.FleetId, r.VehicleId, r.ReceivedAt);
            }

            _seeded = true;
        }

        var judged = publisher.Activity.Snapshot();
        foreach (var ((fleetId, vehicleId), last) in judged)
        {
            var rule = (await publisher.Rules.GetAsync(fleetId, cancellationToken).ConfigureAwait(false)).VehicleSilent;
            bool silent = rule.IsSilent(last, now);
            bool known = _silent.Contains((fleetId, vehicleId));
            // A vehicle that was out of the table may have an alert left open from before: resolve it (a no-op without one).
            bool fresh = publisher.Activity.TakeFresh(fleetId, vehicleId);
            if (silent == known && !(fresh && !silent))
            {
                continue;
            }

            double silentS = Math.Max(0, (now - last).TotalSeconds);
            var observation = new AlertObservation(
                AlertKinds.VehicleSilent,
                AlertKinds.SeverityOf(AlertKinds.VehicleSilent),
                last,
                silent ? now : last,
                1,
                string.Create(CultureInfo.InvariantCulture, $"Nothing received for {silentS:0} s"),
                new JsonObject { ["silent_s"] = silentS, ["last_received_at"] = last.ToString("O", CultureInfo.InvariantCulture), ["threshold_s"] = rule.SilentS }.ToJsonString(),
                Resolve: !silent);
            if (await publisher.ApplyAsync(fleetId, vehicleId, [observation], cancellationToken).ConfigureAwait(false))
            {
                if (silent)
                {
                    _silent.Add((fleetId, vehicleId));
                }
                else
                {
                    _silent.Remove((fleetId, vehicleId));
                }
            }
        }

        foreach (var key in publisher.Activity.EvictSilentSince(now.AddHours(-options.Value.SilenceLookbackHours), judged))
        {
            _silent.Remove(key);
        }
    }
}
