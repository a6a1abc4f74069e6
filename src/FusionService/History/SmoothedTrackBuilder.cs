// Replays a vehicle's stored measurements and smooths them with the bounded-memory RTS smoother.
using FusionService.Database;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;
using FusionService.Storage.Checkpoints;
using FusionService.Storage.History;
using Microsoft.Extensions.Options;
using StoredOutcome = FusionService.Storage.Measurements.MeasurementOutcome;

namespace FusionService.History;

/// <summary>
/// Builds the smoothed track of one vehicle over a window: restores the newest stored checkpoint at or before the
/// window start (as <c>VehicleTrackGrain</c> restores, but without skipping measurements stored as too late), replays
/// every stored measurement after it except duplicates in canonical order, with no lag window (so late measurements the
/// live filter could not use are in their place), and smooths with <see cref="CompactedTrackReplay"/>.
/// </summary>
internal sealed class SmoothedTrackBuilder(TrackProcessor processor, FusionDatabase database, IOptions<TrackHistoryOptions> options)
{
    /// <summary>Replays and smooths [<paramref name="fromUs"/>, <paramref name="toUs"/>).</summary>
    /// <param name="fleetId">Caller's fleet.</param>
    /// <param name="vehicle">Vehicle id.</param>
    /// <param name="fromUs">Window start, Unix microseconds.</param>
    /// <param name="toUs">Window end (exclusive), Unix microseconds.</param>
    /// <param name="recordIntervalUs">Spacing of the smoothed instants, microseconds.</param>
    /// <param name="cancellationToken">Cancels the reads.</param>
    internal async Task<SmoothedTrack> BuildAsync(
        Guid fleetId, string vehicle, long fromUs, long toUs, long recordIntervalUs, CancellationToken cancellationToken)
    {
        long leadUs = (long)Math.Round(options.Value.ReplayLeadHours * 3.6e9);
        long readFromUs = fromUs - leadUs;
        TrackState start = TrackState.Empty;
        Measurement? floor = null;
        var checkpoint = await new FilterCheckpointRepository(database.DataSource)
            .NewestCheckpointBeforeAsync(fleetId, vehicle, fromUs + 1, cancellationToken).ConfigureAwait(false);
        if (checkpoint is { } row && row.PayloadVersion == TrackStateCodec.Version && row.TimeUs >= readFromUs)
        {
            var (state, last) = TrackStateCodec.Decode(row.Payload.Span);
            start = state;
            floor = last;
            readFromUs = last.TimeUs;
        }

        var measurements = new List<Measurement>();
        var reader = new TrackHistoryReader(database.DataSource);
        await foreach (var s in reader.StreamMeasurementsAsync(fleetId, vehicle, readFromUs, toUs, 0, (short)SensorKind.Imu, cancellationToken).ConfigureAwait(false))
        {
            if (s.Outcome == StoredOutcome.Duplicate)
            {
                continue;
            }

            var m = Measurement.FromStored(s.TimeUs, ((ulong)(byte)s.Kind << 56) | (ulong)s.MessageKey, s.V0, s.V1 ?? double.NaN, (float)(s.V2 ?? 0));
            if (floor is { } f && VehicleTrack.CompareKey(m, f) <= 0)
            {
                continue;
            }

            measurements.Add(m);
        }

        var segments = CompactedTrackReplay.Run(processor, start, measurements, recordIntervalUs, discardBeforeUs: fromUs);
        return new SmoothedTrack(segments, measurements, floor is not null);
    }
}
