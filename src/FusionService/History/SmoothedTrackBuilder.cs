// Replays a vehicle's stored measurements and smooths them with the bounded-memory RTS smoother.
using System.Collections.Concurrent;
using FusionService.Database;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;
using FusionService.Storage.Checkpoints;
using FusionService.Storage.History;
using Microsoft.Extensions.Options;

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

        // Reading (a PostgreSQL backend scanning the rows) and the replay (this process filtering them) overlap: the
        // rows go over in chunks to a replay thread, so when a core is free the request takes about the longer of the
        // two instead of their sum (on a loaded machine little is gained: docs/benchmarks.md, smoothed track of a vehicle-day).
        var measurements = new List<Measurement>();
        using var chunks = new BlockingCollection<Measurement[]>();
        using var stop = CancellationTokenSource.CreateLinkedTokenSource(cancellationToken);
        Measurement? skipUpTo = floor;
        int expectedInstants = ExpectedInstants(fromUs, toUs, recordIntervalUs);
        Task<IReadOnlyList<SmoothedSegment>> replay = Task.Factory.StartNew(
            () => CompactedTrackReplay.Run(
                processor, start, Collect(chunks, skipUpTo, measurements, stop.Token), recordIntervalUs, discardBeforeUs: fromUs, expectedInstants),
            stop.Token,
            TaskCreationOptions.LongRunning,
            TaskScheduler.Default);
        try
        {
            var chunk = new Measurement[ChunkLength];
            int filled = 0;
            var reader = new TrackHistoryReader(database.DataSource);
            await reader.ReadReplayMeasurementsAsync(
                fleetId,
                vehicle,
                readFromUs,
                toUs,
                0,
                (short)SensorKind.Imu,
                s =>
                {
                    chunk[filled++] = Measurement.FromStored(
                        s.TimeUs, ((ulong)(byte)s.Kind << 56) | (ulong)s.MessageKey, s.V0, s.V1 ?? double.NaN, (float)(s.V2 ?? 0));
                    if (filled == ChunkLength)
                    {
                        chunks.Add(chunk, stop.Token);
                        chunk = new Measurement[ChunkLength];
                        filled = 0;
                    }
                },
                stop.Token).ConfigureAwait(false);
            if (filled > 0)
            {
                chunks.Add(chunk[..filled], stop.Token);
            }
        }
        catch
        {
            // The replay thread must not wait for rows that will never come, nor outlive the collection; the read's
            // failure is the one reported, so the replay's own (cancellation) is observed and dropped.
            await stop.CancelAsync().ConfigureAwait(false);
            chunks.CompleteAdding();
            await Task.WhenAny(replay).ConfigureAwait(false);
            _ = replay.Exception;
            throw;
        }
        finally
        {
            if (!chunks.IsAddingCompleted)
            {
                chunks.CompleteAdding();
            }
        }

        var segments = await replay.ConfigureAwait(false);
        return new SmoothedTrack(segments, measurements, floor is not null);
    }

    /// <summary>
    /// Smoothed instants a window can hold at most (one per interval, while data come), capped at
    /// <see cref="MaxPreallocatedInstants"/> so that a long window of a parked van does not reserve memory it never fills.
    /// </summary>
    internal static int ExpectedInstants(long fromUs, long toUs, long recordIntervalUs) =>
        (int)Math.Min(((toUs - fromUs) / Math.Max(recordIntervalUs, 1)) + 2, MaxPreallocatedInstants);

    /// <summary>Largest number of smoothed instants made room for up front (about 40 MB; a vehicle-day at 1 s has 30,000).</summary>
    private const int MaxPreallocatedInstants = 1 << 15;

    /// <summary>Rows handed from the storage read to the replay thread at a time.</summary>
    private const int ChunkLength = 8192;

    /// <summary>
    /// The measurements of <paramref name="chunks"/> in order, without those at or before <paramref name="floor"/> (already
    /// in the checkpoint), each also appended to <paramref name="kept"/>.
    /// </summary>
    private static IEnumerable<Measurement> Collect(
        BlockingCollection<Measurement[]> chunks, Measurement? floor, List<Measurement> kept, CancellationToken cancellationToken)
    {
        foreach (Measurement[] chunk in chunks.GetConsumingEnumerable(cancellationToken))
        {
            foreach (Measurement m in chunk)
            {
                if (floor is { } f && VehicleTrack.CompareKey(m, f) <= 0)
                {
                    continue;
                }

                kept.Add(m);
                yield return m;
            }
        }
    }
}
