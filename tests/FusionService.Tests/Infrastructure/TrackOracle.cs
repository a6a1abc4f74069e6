// The uninterrupted reference: the estimation core run directly on the same measurements.
using FusionService.Estimation.LinearAlgebra;
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

    /// <summary>The response the service should give for this state.</summary>
    public VehicleStateResponse Response(string vehicle)
    {
        ref readonly TrackState s = ref _track.Current;
        var position = TrackProcessor.PositionOf(s);
        var x = new double[StateVector.Length];
        var p = new double[StateMatrix.Length];
        for (int i = 0; i < x.Length; i++)
        {
            x[i] = s.X[i];
        }

        for (int i = 0; i < p.Length; i++)
        {
            p[i] = s.P[i];
        }

        (double share, double timeConstantS, bool fitted) = _track.Processor.GnssErrorModelOf(s);
        return VehicleEndpoints.ToResponse(
            vehicle,
            new VehicleStateSnapshot(s.TimeUs, "running", position.LatitudeDeg, position.LongitudeDeg, x, p, [.. _last], s.Resets, share, timeConstantS, fitted));
    }
}
