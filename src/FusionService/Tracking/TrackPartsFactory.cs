// Makes the per-vehicle collaborators of a track grain.
using FusionService.Alerts;
using FusionService.Operations;
using Microsoft.Extensions.Options;

namespace FusionService.Tracking;

/// <summary>
/// Creates, for one vehicle track grain at activation, the collaborators that hold per-vehicle state: the
/// <see cref="TrackOutcomeRecorder"/> (verdicts, fused states, alerts) and the <see cref="TrackCheckpointKeeper"/>.
/// Registered once per process by <see cref="TrackingExtensions.AddFusionTracking"/>.
/// </summary>
internal sealed class TrackPartsFactory(
    TrackStore store,
    TrackWriteQueue writes,
    AlertPublisher alerts,
    ServiceMetrics metrics,
    IOptions<TrackGrainOptions> options,
    TimeProvider time,
    ILogger<VehicleTrackGrain> logger)
{
    private readonly long _fusedIntervalUs = (long)Math.Round(options.Value.FusedStateIntervalS * 1e6);

    /// <summary>The observer of the vehicle's track.</summary>
    public TrackOutcomeRecorder CreateRecorder(Guid fleetId, string vehicleId) =>
        new(fleetId, vehicleId, writes, alerts.CreateMonitor(fleetId, vehicleId), new FusedStateSampler(_fusedIntervalUs), metrics);

    /// <summary>The checkpoint keeper of the vehicle's track; <paramref name="trackKey"/> names the track in logs.</summary>
    public TrackCheckpointKeeper CreateCheckpointKeeper(Guid fleetId, string vehicleId, string trackKey) =>
        new(fleetId, vehicleId, trackKey, store, writes, options.Value, time, logger);
}
