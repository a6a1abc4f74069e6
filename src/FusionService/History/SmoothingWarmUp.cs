// Runs the smoothed-track code paths a few times at start-up, so that the first requests do not pay for their compilation.
using System.Diagnostics;
using FusionService.Database;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Smoothing;
using FusionService.Estimation.Tracking;
using FusionService.Scenarios;
using FusionService.Storage.History;
using Microsoft.Extensions.Options;

namespace FusionService.History;

/// <summary>
/// After start-up, runs <see cref="TrackHistoryOptions.WarmUpRounds"/> rounds of what a smoothed-track request runs —
/// a replay read that finds no rows, the filter and recorder in two stretches over an invented 10-minute round, the join
/// and backward pass, and every track format written to nowhere — with pauses between them for the runtime to replace
/// the first, quickly compiled code by optimised code (tiered compilation). Nothing is stored and no vehicle is read.
/// </summary>
internal sealed class SmoothingWarmUp(
    TrackProcessor processor, FusionDatabase database, IOptions<TrackHistoryOptions> options, IHostApplicationLifetime lifetime,
    ILogger<SmoothingWarmUp> logger) : BackgroundService
{
    /// <summary>Rounds done so far (for tests).</summary>
    internal int RoundsDone { get; private set; }

    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        int rounds = options.Value.WarmUpRounds;
        if (rounds == 0)
        {
            return;
        }

        var started = new TaskCompletionSource();
        using (lifetime.ApplicationStarted.Register(() => started.TrySetResult()))
        using (stoppingToken.Register(() => started.TrySetCanceled(stoppingToken)))
        {
            await started.Task.ConfigureAwait(false);
        }

        try
        {
            await RunRoundsAsync(rounds, stoppingToken).ConfigureAwait(false);
        }
        catch (Exception ex) when (ex is not OperationCanceledException || !stoppingToken.IsCancellationRequested)
        {
            // Only the first requests would be slower; the service must not stop for it.
            logger.LogWarning(ex, "Smoothed-track warm-up stopped after {Rounds} rounds", RoundsDone);
        }
    }

    private async Task RunRoundsAsync(int rounds, CancellationToken stoppingToken)
    {
        var clock = Stopwatch.StartNew();
        Measurement[] round = InventedRound();
        int middle = round.Length / 2;
        TrackState atMiddle = TrackState.Empty;
        foreach (Measurement m in round.AsSpan(0, middle))
        {
            if (atMiddle.Phase != TrackPhase.Running || m.TimeUs >= atMiddle.TimeUs)
            {
                processor.Process(ref atMiddle, m);
            }
        }

        var reader = new TrackHistoryReader(database.ReadDataSource);
        for (int r = 0; r < rounds && !stoppingToken.IsCancellationRequested; r++)
        {
            // A vehicle id no ingest accepts (control character), so the read finds nothing.
            await reader.ReadReplayMeasurementsAsync(Guid.Empty, "\u0001warm-up", 0, 1, 0, (short)SensorKind.Imu, _ => { }, stoppingToken).ConfigureAwait(false);
            var first = Task.Run(() => CompactedTrackReplay.Forward(processor, TrackState.Empty, round[..middle], 1_000_000), stoppingToken);
            var second = Task.Run(() => CompactedTrackReplay.Forward(processor, atMiddle, round[middle..], 1_000_000), stoppingToken);
            var segments = CompactedTrackReplay.Smooth([await first.ConfigureAwait(false), await second.ConfigureAwait(false)]);
            foreach (TrackFormat format in Enum.GetValues<TrackFormat>())
            {
                WriteNowhere(format, segments);
            }

            RoundsDone = r + 1;
            await Task.Delay(WarmUpPause, stoppingToken).ConfigureAwait(false);
        }

        logger.LogInformation("Smoothed-track warm-up: {Rounds} rounds in {Ms} ms", RoundsDone, clock.ElapsedMilliseconds);
    }

    /// <summary>Pause after a round: longer than the runtime's 100 ms wait before it counts calls for recompilation.</summary>
    private static readonly TimeSpan WarmUpPause = TimeSpan.FromMilliseconds(250);

    /// <summary>An invented 10-minute delivery round with three stops (demo data).</summary>
    private static Measurement[] InventedRound()
    {
        TruthTrajectory truth = new DeliveryNetwork().PlanRound(1, stopCount: 3, seed: 97, minDwellS: 20, maxDwellS: 40).Drive();
        return [.. MeasurementGenerator.Generate(truth, SensorSuite.ForProfile(NoiseProfile.DeliveryVan), seed: 98).Measurements];
    }

    private static void WriteNowhere(TrackFormat format, IReadOnlyList<SmoothedSegment> segments)
    {
        TrackFormatWriter writer = TrackFormatWriter.Create(format, Stream.Null);
        writer.Begin(new TrackHeader("warm-up", "smoothed", 0, 1, string.Empty));
        for (int si = 0; si < segments.Count; si++)
        {
            for (int k = 0; k < segments[si].Count; k++)
            {
                writer.Point(TrackPointSources.ToPoint(segments[si], k, si));
            }
        }

        writer.End();
        writer.Flush();
    }
}
