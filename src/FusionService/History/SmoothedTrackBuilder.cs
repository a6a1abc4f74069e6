// Replays a vehicle's stored measurements and smooths them with the bounded-memory RTS smoother.
using System.Collections.Concurrent;
using System.Diagnostics;
using FusionService.Database;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;
using FusionService.Operations;
using FusionService.Storage.Checkpoints;
using FusionService.Storage.History;
using FusionService.Storage.Measurements;
using FusionService.Storage.Vehicles;
using Microsoft.Extensions.Options;

namespace FusionService.History;

/// <summary>
/// Builds the smoothed track of one vehicle over a window: restores the newest stored checkpoint at or before the
/// window start (as <c>VehicleTrackGrain</c> restores, but without skipping measurements stored as too late), replays
/// every stored measurement after it except duplicates in canonical order, with no lag window (so late measurements the
/// live filter could not use are in their place), and smooths with the bounded-memory RTS smoother
/// (<see cref="CompactedTrackReplay"/>).
/// </summary>
/// <remarks>
/// A long window is replayed in stretches side by side (<see cref="TrackHistoryOptions.ReplayStretches"/>): split at
/// the checkpoints the track stored inside it, each stretch filtered from its checkpoint on its own thread with its own
/// read. A stretch is joined to the next only if it ended in exactly the state of the checkpoint the next one started
/// from (compared byte for byte in the checkpoint encoding) — which fails when a measurement stored as too late lies
/// before that checkpoint — otherwise the rest is replayed again from where it ended, so the result is always the one
/// replay in a single stretch gives (<c>CompactedTrackReplay.Smooth</c>; tests: <c>SplitReplayTests</c>).
/// </remarks>
internal sealed class SmoothedTrackBuilder(
    TrackProcessor processor,
    FusionDatabase database,
    IOptions<TrackHistoryOptions> options,
    IOptions<HeavyReadOptions> heavyReads,
    ReplayCpuBudget cpuBudget,
    ServiceMetrics metrics,
    ILogger<SmoothedTrackBuilder> logger)
{
    /// <summary>Segment arrays shared by the requests (a vehicle-day's are about 36 MB; see <see cref="SegmentArrayPool"/>).</summary>
    private readonly SegmentArrayPool _pool = new(MaxPreallocatedInstants);

    /// <summary>Replays and smooths [<paramref name="fromUs"/>, <paramref name="toUs"/>); dispose the result when it has been written.</summary>
    /// <param name="fleetId">Caller's fleet.</param>
    /// <param name="vehicle">Vehicle id.</param>
    /// <param name="fromUs">Window start, Unix microseconds.</param>
    /// <param name="toUs">Window end (exclusive), Unix microseconds.</param>
    /// <param name="recordIntervalUs">Spacing of the smoothed instants, microseconds.</param>
    /// <param name="keepDistanceInputs">Whether to keep the replayed wheel speeds and GNSS positions in the result (for the
    /// wheel distance and the raw-fix polyline).</param>
    /// <param name="cancellationToken">Cancels the reads.</param>
    internal async Task<SmoothedTrack> BuildAsync(
        Guid fleetId, string vehicle, long fromUs, long toUs, long recordIntervalUs, bool keepDistanceInputs, CancellationToken cancellationToken)
    {
        using var span = FusionTelemetry.StartSmoothing(vehicle, fromUs, toUs);
        long startedAt = Stopwatch.GetTimestamp();
        long leadUs = (long)Math.Round(options.Value.ReplayLeadHours * 3.6e9);
        long readFromUs = fromUs - leadUs;
        TrackState start;
        Measurement? floor = null;
        var checkpoints = new FilterCheckpointRepository(database.ReadDataSource);
        var checkpoint = await checkpoints.NewestCheckpointBeforeAsync(fleetId, vehicle, fromUs + 1, cancellationToken).ConfigureAwait(false);
        if (checkpoint is { } row && TrackStateCodec.CanDecode(row.PayloadVersion) && row.TimeUs >= readFromUs)
        {
            var (state, last) = TrackStateCodec.Decode(row.Payload.Span);
            start = state;
            floor = last;
            readFromUs = last.TimeUs;
        }
        else
        {
            // From the first measurement read: where the vehicle's track started (its receiver fit's starting pair).
            start = await new ReceiverFitRepository(database.ReadDataSource).StartStateAsync(fleetId, vehicle, cancellationToken).ConfigureAwait(false);
        }

        var seams = await SeamsAsync(checkpoints, fleetId, vehicle, Math.Max(fromUs, readFromUs), toUs, cancellationToken).ConfigureAwait(false);
        var stretches = new List<Stretch>(seams.Count + 1);
        Stretch first = new(start, floor, readFromUs, seams.Count > 0 ? seams[0].Last : null, KeepsCheckpointed: true);
        stretches.Add(first);
        for (int i = 0; i < seams.Count; i++)
        {
            stretches.Add(new Stretch(seams[i].State, seams[i].Last, seams[i].Last.TimeUs, i + 1 < seams.Count ? seams[i + 1].Last : null, KeepsCheckpointed: false));
        }

        var replays = stretches.Select(s => ReplayAsync(fleetId, vehicle, s, fromUs, toUs, recordIntervalUs, keepDistanceInputs, cancellationToken)).ToList();
        // WhenAll waits for every stretch, so none is left running when a failure is reported.
        await Task.WhenAll(replays).ConfigureAwait(false);

        var passes = new List<ForwardPass>(replays.Count);
        var distanceInputs = new List<Measurement>();
        int seamMisses = 0;
        for (int i = 0; i < replays.Count; i++)
        {
            var (pass, kept) = await replays[i].ConfigureAwait(false);
            passes.Add(pass);
            distanceInputs.AddRange(kept);
            if (i < seams.Count && !EndsAt(pass.End, seams[i]))
            {
                // The stretch did not end in the stored state (a measurement stored as too late before the checkpoint,
                // say): the rest of the window is replayed again from where this stretch ended.
                logger.LogInformation(
                    "Smoothed track of {Vehicle}: the replay did not reach the stored checkpoint at {TimeUs}; replaying the rest of the window from there",
                    vehicle, seams[i].Last.TimeUs);
                var (rest, restKept) = await ReplayAsync(
                    fleetId, vehicle, new Stretch(pass.End, seams[i].Last, seams[i].Last.TimeUs, null, KeepsCheckpointed: false), fromUs, toUs, recordIntervalUs, keepDistanceInputs,
                    cancellationToken).ConfigureAwait(false);
                passes.Add(rest);
                distanceInputs.AddRange(restKept);
                seamMisses++;
                break;
            }
        }

        metrics.CountSmoothingReplay(stretches.Count, seamMisses);
        var carried = new List<CarriedInterval>();
        foreach (ForwardPass pass in passes)
        {
            foreach (CarriedInterval interval in pass.Carried)
            {
                CarriedInterval.Append(carried, interval);
            }
        }

        double stretchesMs = Stopwatch.GetElapsedTime(startedAt).TotalMilliseconds;
        double smootherCpuMs = double.NaN;
        var segments = await LowPriorityThread.Run(
            "fusion-smooth",
            heavyReads.Value.LowCpuPriority,
            () =>
            {
                double? cpuS = ReplayCpuBudget.ThreadCpuS();
                var smoothed = CompactedTrackReplay.Smooth(passes);
                smootherCpuMs = CpuMsSince(cpuS);
                return smoothed;
            },
            cancellationToken,
            logger).ConfigureAwait(false);
        double totalMs = Stopwatch.GetElapsedTime(startedAt).TotalMilliseconds;
        span?.SetTag("fusion.smoothing.stretches_done_ms", stretchesMs).SetTag("fusion.smoothing.done_ms", totalMs).SetTag("fusion.smoothing.backward_cpu_ms", smootherCpuMs);
        if (logger.IsEnabled(LogLevel.Debug))
        {
            logger.LogDebug(
                "Smoothed track of {Vehicle}: stretches done after {StretchesMs:F0} ms, smoothed after {TotalMs:F0} ms (backward pass {SmootherCpuMs:F0} ms of processor time)",
                vehicle, stretchesMs, totalMs, smootherCpuMs);
        }

        return new SmoothedTrack(segments, distanceInputs, floor is not null, carried);
    }

    /// <summary>
    /// Checkpoints inside the window to split the replay at: running states of the current encoding, at most
    /// <see cref="TrackHistoryOptions.ReplayStretches"/> - 1 of them, spread so the stretches hold about as many
    /// checkpoint intervals each (the track stores one per spacing of data time, so about as much data).
    /// </summary>
    private async Task<IReadOnlyList<Seam>> SeamsAsync(
        FilterCheckpointRepository checkpoints, Guid fleetId, string vehicle, long afterUs, long beforeUs, CancellationToken cancellationToken)
    {
        int stretches = options.Value.ReplayStretches;
        if (stretches <= 1)
        {
            return [];
        }

        var rows = await checkpoints.CheckpointsBetweenAsync(fleetId, vehicle, afterUs, beforeUs, cancellationToken).ConfigureAwait(false);
        var usable = new List<Seam>(rows.Count);
        foreach (var row in rows)
        {
            if (!TrackStateCodec.CanDecode(row.PayloadVersion))
            {
                continue;
            }

            var (state, last) = TrackStateCodec.Decode(row.Payload.Span);
            if (state.Phase == TrackPhase.Running)
            {
                usable.Add(new Seam(state, last, row.Payload));
            }
        }

        // With c checkpoints there are c + 1 intervals (the last one partial); stretch i starts at about i (c + 1) / n.
        int parts = Math.Min(stretches, usable.Count + 1);
        var seams = new List<Seam>(parts - 1);
        for (int i = 1; i < parts; i++)
        {
            int index = (int)Math.Round(i * (usable.Count + 1) / (double)parts) - 1;
            index = Math.Clamp(index, 0, usable.Count - 1);
            if (seams.Count == 0 || VehicleTrack.CompareKey(usable[index].Last, seams[^1].Last) > 0)
            {
                seams.Add(usable[index]);
            }
        }

        return seams;
    }

    /// <summary>Whether <paramref name="end"/> is the checkpoint's state, byte for byte in its encoding.</summary>
    private static bool EndsAt(in TrackState end, Seam seam)
    {
        Span<byte> encoded = stackalloc byte[TrackStateCodec.EncodedLength];
        TrackStateCodec.EncodeInto(end, seam.Last, encoded);
        return encoded.SequenceEqual(seam.Payload.Span);
    }

    /// <summary>Reads one stretch's measurements and runs its forward pass, the two overlapped.</summary>
    private async Task<(ForwardPass Pass, List<Measurement> DistanceInputs)> ReplayAsync(
        Guid fleetId, string vehicle, Stretch stretch, long fromUs, long toUs, long recordIntervalUs, bool keepDistanceInputs, CancellationToken cancellationToken)
    {
        // Reading (a PostgreSQL backend scanning the rows) and the replay (this process filtering them) overlap: the
        // rows go over in chunks to a replay thread, so when a core is free the stretch takes about the longer of the
        // two instead of their sum (on a loaded machine little is gained: docs/benchmarks.md, smoothed track of a vehicle-day).
        using var span = FusionTelemetry.StartStretch(stretch.ReadFromUs);
        long startedAt = Stopwatch.GetTimestamp();
        double readMs = double.NaN;
        double replayMs = double.NaN;
        double replayCpuMs = double.NaN;
        List<Measurement> distanceInputs = [];
        using var chunks = new BlockingCollection<Chunk>();
        using var spare = new BlockingCollection<Measurement[]>();
        using var stop = CancellationTokenSource.CreateLinkedTokenSource(cancellationToken);
        long readToUs = stretch.Ceiling is { } ceiling ? Math.Min(ceiling.TimeUs + 1, toUs) : toUs;
        int expectedInstants = ExpectedInstants(Math.Max(fromUs, stretch.ReadFromUs), readToUs, recordIntervalUs);
        TrackState start = stretch.Start;
        // The filter's work (most of a smoothed read's processor time) runs at the lowest scheduling priority, so that
        // ingest on the same cores always goes first (HeavyReads:LowCpuPriority).
        Task<ForwardPass> replay = LowPriorityThread.Run(
            "fusion-replay",
            heavyReads.Value.LowCpuPriority,
            () =>
            {
                double? cpuS = ReplayCpuBudget.ThreadCpuS();
                var pass = CompactedTrackReplay.Forward(
                    processor,
                    start,
                    Collect(chunks, spare, stretch.Floor, stretch.Ceiling, keepDistanceInputs ? distanceInputs : null, stretch.KeepsCheckpointed, cpuBudget, stop.Token),
                    recordIntervalUs,
                    discardBeforeUs: fromUs,
                    expectedInstants,
                    _pool);
                replayCpuMs = CpuMsSince(cpuS);
                replayMs = Stopwatch.GetElapsedTime(startedAt).TotalMilliseconds;
                return pass;
            },
            stop.Token,
            logger);

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
            int arrays = 1;
            var reader = new TrackHistoryReader(database.ReadDataSource);
            await reader.ReadReplayMeasurementsAsync(
                fleetId,
                vehicle,
                stretch.ReadFromUs,
                readToUs,
                0,
                (short)SensorKind.Imu,
                s =>
                {
                    chunk[filled++] = MeasurementRows.ToMeasurement(s);
                    if (filled == ChunkLength)
                    {
                        chunks.Add(new Chunk(chunk, filled), stop.Token);

                        // A few arrays go round between the two threads instead of one new one per chunk.
                        if (!spare.TryTake(out chunk))
                        {
                            chunk = new Measurement[ChunkLength];
                            arrays++;
                        }

                        filled = 0;
                    }
                },
                async token =>
                {
                    // Ahead of the replay by ChunksInFlight arrays: wait for one to come back. Polled, not signalled: the
                    // replay's thread runs at the lowest priority, and a wake-up it caused would queue this continuation to
                    // the thread pool from there (LowPriorityThread). Waiting blocks no pool thread, which on a small machine
                    // the ingest needs (a blocking wait here held one per stretch for as long as the replay lagged).
                    while (arrays >= ChunksInFlight && spare.Count == 0)
                    {
                        await Task.Delay(SparePollMs, token).ConfigureAwait(false);
                    }
                },
                stop.Token).ConfigureAwait(false);
            if (filled > 0)
            {
                chunks.Add(new Chunk(chunk, filled), stop.Token);
            }

            readMs = Stopwatch.GetElapsedTime(startedAt).TotalMilliseconds;
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

        var result = await replay.ConfigureAwait(false);
        span?.SetTag("fusion.smoothing.read_done_ms", readMs).SetTag("fusion.smoothing.replay_done_ms", replayMs).SetTag("fusion.smoothing.replay_cpu_ms", replayCpuMs);
        if (logger.IsEnabled(LogLevel.Debug))
        {
            logger.LogDebug(
                "Smoothing stretch from {ReadFromUs}: read done after {ReadMs:F0} ms, replay done after {ReplayMs:F0} ms with {ReplayCpuMs:F0} ms of processor time",
                stretch.ReadFromUs, readMs, replayMs, replayCpuMs);
        }

        return (result, distanceInputs);
    }

    /// <summary>Processor time of the calling thread since <paramref name="startS"/>, milliseconds; NaN where it cannot be read.</summary>
    private static double CpuMsSince(double? startS) =>
        startS is { } from && ReplayCpuBudget.ThreadCpuS() is { } now ? (now - from) * 1e3 : double.NaN;

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
    /// Chunk arrays a stretch's read may get ahead of its replay by (a stored chunk's rows, up to two arrays, may come on
    /// top before the read waits); later chunks reuse the ones the replay has finished with.
    /// </summary>
    private const int ChunksInFlight = 8;

    /// <summary>How often a read waiting for the replay looks for a returned array, milliseconds.</summary>
    private const int SparePollMs = 2;

    /// <summary>
    /// The measurements of <paramref name="chunks"/> in order, without those at or before <paramref name="floor"/> (already
    /// in the checkpoint) or after <paramref name="ceiling"/> (the next stretch's); wheel speeds and GNSS positions also
    /// appended to <paramref name="distanceInputs"/> when given, those in the checkpoint too when
    /// <paramref name="keepCheckpointed"/> (the first stretch: its checkpoint may end inside the window). Each finished
    /// chunk's array goes back through <paramref name="spare"/>, and the processor time the consuming thread took for it is
    /// charged to <paramref name="cpuBudget"/> (this runs on the replay's thread).
    /// </summary>
    private static IEnumerable<Measurement> Collect(
        BlockingCollection<Chunk> chunks, BlockingCollection<Measurement[]> spare, Measurement? floor, Measurement? ceiling, List<Measurement>? distanceInputs,
        bool keepCheckpointed, ReplayCpuBudget cpuBudget, CancellationToken cancellationToken)
    {
        var meter = cpuBudget.StartMeter();
        foreach (Chunk chunk in chunks.GetConsumingEnumerable(cancellationToken))
        {
            meter.Charge(cancellationToken);
            for (int i = 0; i < chunk.Count; i++)
            {
                Measurement m = chunk.Items[i];
                if (ceiling is { } c && VehicleTrack.CompareKey(m, c) > 0)
                {
                    continue;
                }

                bool checkpointed = floor is { } f && VehicleTrack.CompareKey(m, f) <= 0;
                if (distanceInputs is not null && (m.Kind is SensorKind.WheelSpeed or SensorKind.GnssPosition) && (!checkpointed || keepCheckpointed))
                {
                    distanceInputs.Add(m);
                }

                if (checkpointed)
                {
                    continue;
                }

                yield return m;
            }

            spare.Add(chunk.Items, cancellationToken);
        }
    }

    /// <summary>The first <paramref name="Count"/> measurements of <paramref name="Items"/>.</summary>
    private readonly record struct Chunk(Measurement[] Items, int Count);

    /// <summary>A stored checkpoint a replay may be split at: its state, the last measurement in it, and its encoding.</summary>
    private sealed record Seam(TrackState State, Measurement Last, ReadOnlyMemory<byte> Payload);

    /// <summary>
    /// One stretch of a replay: the state it starts from and the last measurement in that state (null: the empty state),
    /// where its read starts, the last measurement it takes (null: up to the window's end), and whether the
    /// distance inputs it keeps include those already in its starting checkpoint (only the first stretch's: the others'
    /// are the previous stretch's last ones).
    /// </summary>
    private sealed record Stretch(TrackState Start, Measurement? Floor, long ReadFromUs, Measurement? Ceiling, bool KeepsCheckpointed);
}
