// The rows a track's outcomes and posteriors become.
using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using FusionService.Storage.FusedStates;
using FusionService.Storage.Measurements;

namespace FusionService.Storage.Tracks;

/// <summary>
/// Maps the core's outcomes and states to the rows the service stores (verdicts, fused states): one mapping for the track
/// grains and for the storage probe that measures what those rows cost.
/// </summary>
public static class TrackRows
{
    /// <summary>The verdict row of <paramref name="m"/>.</summary>
    public static MeasurementOutcomeUpdate Verdict(Guid fleetId, string vehicleId, in Measurement m, in MeasurementOutcome outcome)
    {
        var key = new MeasurementKey(fleetId, vehicleId, (short)m.Kind, m.TimeUs, (long)m.MessageKey);
        return new MeasurementOutcomeUpdate(
            key,
            ToStored(outcome.Kind),
            double.IsFinite(outcome.Nis) && outcome.Nis >= 0 ? outcome.Nis : null,
            outcome.Kind == OutcomeKind.TrackReset)
        {
            Whitened0 = StoredWhitened(outcome.Whitened0),
            Whitened1 = StoredWhitened(outcome.Whitened1),
        };
    }

    /// <summary>The fused-state row of <paramref name="s"/>: position, state and the vehicle's part of the covariance.</summary>
    public static FusedStateRow FusedState(Guid fleetId, string vehicleId, in TrackState s)
    {
        var position = TrackProcessor.PositionOf(s);
        var packed = new double[FusedStateRow.PackedCovarianceLength];
        int k = 0;
        // The vehicle's own components only; the GNSS error states describe the receiver, not the van.
        for (int i = 0; i < StateIndex.VehicleCount; i++)
        {
            for (int j = i; j < StateIndex.VehicleCount; j++)
            {
                packed[k++] = s.P[(i * StateIndex.Count) + j];
            }
        }

        var ellipse = ErrorEllipse.FromCovariance(s.P[0], s.P[(1 * StateIndex.Count) + 1], s.P[1]);
        return new FusedStateRow(
            fleetId,
            vehicleId,
            s.TimeUs,
            position.LatitudeDeg,
            position.LongitudeDeg,
            s.X[StateIndex.HeadingRad],
            s.X[StateIndex.SpeedMps],
            s.X[StateIndex.YawRateRps],
            s.X[StateIndex.AccelMps2],
            s.X[StateIndex.GyroBiasRps],
            s.X[StateIndex.WheelScale],
            packed,
            ellipse.SemiMajorM,
            ellipse.SemiMinorM,
            ellipse.OrientationRad);
    }

    /// <summary>A whitened innovation component as stored (<c>real</c>), null when there is none or it does not fit.</summary>
    private static float? StoredWhitened(double w) => double.IsFinite(w) && Math.Abs(w) < float.MaxValue ? (float)w : null;

    private static OutcomeKind ToStored(OutcomeKind kind) => kind switch
    {
        OutcomeKind.Accepted or OutcomeKind.TrackReset => OutcomeKind.Accepted,
        OutcomeKind.Gated => OutcomeKind.Gated,
        OutcomeKind.TooLate => OutcomeKind.TooLate,
        OutcomeKind.Initialising => OutcomeKind.Initialising,
        OutcomeKind.BeforeStart => OutcomeKind.BeforeStart,
        OutcomeKind.Unusable => OutcomeKind.Unusable,
        _ => OutcomeKind.Unused,
    };
}
