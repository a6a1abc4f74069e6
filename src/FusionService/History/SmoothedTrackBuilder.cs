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
    /// <summary>Segment arrays shared by the requests (a vehicle-day's are about 36 MB; see <see cref="SegmentArrayPool"/>).</summary>
    private readonly SegmentArrayPool _pool = new(MaxPreallocatedInstants);

    /// <summary>Replays and smooths [<paramref name="fromUs"/>, <paramref name="toUs"/>); dispose the result when it has been written.</summary>
    /// <param name="fleetId">Caller's fleet.</param>
    /// <param name="vehicle">Vehicle id.</param>
    /// <param name="fromUs">Window start, Unix microseconds.</param>
    /// <param name="toUs">Window end (exclusive), Unix microseconds.</param>
    /// <param name="recordIntervalUs">Spacing of the smoothed instants, microseconds.</param>
    /// <param name="keepWheelSpeeds">Whether to keep the replayed wheel speeds in the result (for the wheel distance).</param>
    /// <param name="cancellationToken">Cancels the reads.</param>
    internal async Task<SmoothedTrack> BuildAsync(
        Guid fleetId, string vehicle, long fromUs, long toUs, long recordIntervalUs, bool keepWheelSpeeds, CancellationToken cancellationToken)
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
        List<Measurement>? wheelSpeeds = keepWheelSpeeds ? [] : null;
        using var chunks = new BlockingCollection<Chunk>();
        using var spare = new BlockingCollection<Measurement[]>();
        using var stop = CancellationTokenSource.CreateLinkedTokenSource(cancellationToken);
        Measurement? skipUpTo = floor;
        int expectedInstants = ExpectedInstants(fromUs, toUs, recordIntervalUs);
        Task<IReadOnlyList<SmoothedSegment>> replay = Task.Factory.StartNew(
            () => CompactedTrackReplay.Run(
                processor, start, Collect(chunks, spare, skipUpTo, wheelSpeeds, stop.Token), recordIntervalUs, discardBeforeUs: fromUs, expectedInstants, _pool),
            stop.Token,
            TaskCreationOptions.LongRunning,
            TaskScheduler.Default);

        // A failed replay returns no more chunk arrays: the read must not wait for one.
        _ = replay.ContinueWith(
            _ =>
            {
                try
                {
                    stop.Cancel();
                }
                catch (ObjectDisposedException)
                {
                    // The request has already ended.
                }
            },
            CancellationToken.None,
            TaskContinuationOptions.OnlyOnFaulted,
            TaskScheduler.Default);
        try
        {
            var chunk = new Measurement[ChunkLength];
            int filled = 0;
            int chunkCount = 0;
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
                        chunks.Add(new Chunk(chunk, filled), stop.Token);
                        chunkCount++;

                        // A few arrays go round between the two threads instead of one new one per chunk.
                        chunk = chunkCount < ChunksInFlight ? new Measurement[ChunkLength] : spare.Take(stop.Token);
                        filled = 0;
                    }
                },
                stop.Token).ConfigureAwait(false);
            if (filled > 0)
            {
                chunks.Add(new Chunk(chunk, filled), stop.Token);
            }
        }
        catch (OperationCanceledException) when (replay.IsFaulted && !cancellationToken.IsCancellationRequested)
        {
            // The read stopped because the replay failed; awaiting the replay below reports its failure.
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
        return new SmoothedTrack(segments, wheelSpeeds ?? [], floor is not null);
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

    /// <summary>Chunk arrays made per request; later chunks reuse the ones the replay has finished with.</summary>
    private const int ChunksInFlight = 8;

    /// <summary>
    /// The measurements of <paramref name="chunks"/> in order, without those at or before <paramref name="floor"/> (already
    /// in the checkpoint); wheel speeds also appended to <paramref name="wheelSpeeds"/> when given. Each finished chunk's
    /// array goes back through <paramref name="spare"/>.
    /// </summary>
    private static IEnumerable<Measurement> Collect(
        BlockingCollection<Chunk> chunks, BlockingCollection<Measurement[]> spare, Measurement? floor, List<Measurement>? wheelSpeeds,
        CancellationToken cancellationToken)
    {
        foreach (Chunk chunk in chunks.GetConsumingEnumerable(cancellationToken))
        {
            for (int i = 0; i < chunk.Count; i++)
            {
                Measurement m = chunk.Items[i];
                if (floor is { } f && VehicleTrack.CompareKey(m, f) <= 0)
                {
                    continue;
                }

                if (wheelSpeeds is not null && m.Kind == SensorKind.WheelSpeed)
                {
                    wheelSpeeds.Add(m);
                }

                yield return m;
            }

            spare.Add(chunk.Items, cancellationToken);
        }
    }

    /// <summary>The first <paramref name="Count"/> measurements of <paramref name="Items"/>.</summary>
    private readonly record struct Chunk(Measurement[] Items, int Count);
}
