// The uninterrupted reference: the estimation core run directly on the same measurements.
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using FusionService.Tracking;
using FusionService.Vehicles;

namespace FusionService.Tests.Infrastructure;

/// <summary>A <see cref="VehicleTrack"/> fed directly, in the order the service receives the messages.</summary>
internal sealed class TrackOracle
{
    private readonly VehicleTrack _track = new(new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan));
    private readonly long?[] _last = new long?[4];

    /// <summary>Processes the measurements of messages in order.</summary>
    public void Process(IEnumerable<Measurement[]> messages)
    {
        foreach (var core in messages)
        {
            foreach (var m in core)
            {
                var outcome = _track.Process(m);
                if (outcome.Kind is not (OutcomeKind.Duplicate or OutcomeKind.Conflict) && (_last[(int)m.Kind] is not { } seen || seen < m.TimeUs))
                {
                    _last[(int)m.Kind] = m.TimeUs;
                }
            }
        }
    }

    /// <summary>The response the service should give for this state (the track must be running).</summary>
    public VehicleStateResponse Response(string vehicle) =>
        VehicleEndpoints.ToResponse(vehicle, VehicleStateSnapshot.Of(_track.Processor, _track.Current, [.. _last])
            ?? throw new InvalidOperationException("the oracle's track is not running"));
}
