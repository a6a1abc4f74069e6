// The realistic van-day the storage probe stores: measurements, the filter's verdicts, fused states and upload order.
using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using FusionService.Storage.FusedStates;
using FusionService.Storage.Measurements;
using FusionService.Storage.Tracks;

namespace FusionService.Benchmarks.StorageProbe;

/// <summary>
/// <see cref="VanDayScenario"/> (GNSS position and velocity 1 Hz, wheel and IMU 10 Hz, 8 h of one invented van) as the
/// service would store it: every measurement's verdict from the estimation core run once in canonical order, the fused
/// states the service samples (every GNSS position, else at most one a second, as <c>FusedStateSampler</c>), and the
/// uploads in arrival order: one batch per 10 s of data, sent 1 s after its window; a seeded 2 % of batches arrive
/// 300 s late and a seeded 1 % are sent a second time 20 s after their window (a client retry after a lost answer).
/// A delivery older than what is stored re-judges every stored measurement from its earliest new one on (the
/// service's replay writes a verdict for each). Invented demo data, seeded.
/// </summary>
internal sealed class StorageProbeDay
{
    /// <summary>Upload window of one batch, microseconds of data time.</summary>
    public const long BatchUs = 10_000_000;

    /// <summary>How late a late batch arrives after its window, microseconds.</summary>
    public const long LateUs = 300_000_000;

    /// <summary>Share of batches that arrive late.</summary>
    public const double LateShare = 0.02;

    /// <summary>Share of batches sent twice.</summary>
    public const double ResentShare = 0.01;

    public StorageProbeDay(Guid fleetId, string vehicleId)
    {
        Measurements = VanDayScenario.Instance.Measurements;
        Verdicts = new MeasurementOutcomeUpdate[Measurements.Length];
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        var state = TrackState.Empty;
        long lastTakenUs = long.MinValue;
        var states = new List<FusedStateRow>();
        for (int i = 0; i < Measurements.Length; i++)
        {
            Measurement m = Measurements[i];
            MeasurementOutcome outcome = processor.Process(ref state, m);
            Verdicts[i] = TrackRows.Verdict(fleetId, vehicleId, m, outcome);
            if (!state.HasPlane || state.Phase != TrackPhase.Running)
            {
                continue;
            }

            if (m.Kind == SensorKind.GnssPosition || lastTakenUs == long.MinValue || state.TimeUs < lastTakenUs || state.TimeUs - lastTakenUs >= 1_000_000)
            {
                lastTakenUs = state.TimeUs;
                states.Add(TrackRows.FusedState(fleetId, vehicleId, state));
            }
        }

        FusedStates = [.. states];
        Deliveries = PlanDeliveries(Measurements);
    }

    /// <summary>The day in canonical order (time, kind, message key).</summary>
    public Measurement[] Measurements { get; }

    /// <summary>The verdict of each measurement (same index).</summary>
    public MeasurementOutcomeUpdate[] Verdicts { get; }

    /// <summary>Fused states in time order.</summary>
    public FusedStateRow[] FusedStates { get; }

    /// <summary>Uploads in arrival order, with what each one makes the service write.</summary>
    public IReadOnlyList<StorageProbeDelivery> Deliveries { get; }

    /// <summary>Verdict rows written over the day (first verdicts and re-judgements).</summary>
    public long VerdictWrites => Deliveries.Sum(d => (long)d.Judged.Length);

    private List<StorageProbeDelivery> PlanDeliveries(Measurement[] day)
    {
        var random = new Random(1616);
        long t0 = day[0].TimeUs;
        var windows = new List<(int From, int To)>();
        for (int i = 0; i < day.Length;)
        {
            long window = (day[i].TimeUs - t0) / BatchUs;
            int j = i;
            while (j < day.Length && (day[j].TimeUs - t0) / BatchUs == window)
            {
                j++;
            }

            windows.Add((i, j));
            i = j;
        }

        var sends = new List<(long ArrivalUs, int Order, int From, int To)>();
        int order = 0;
        foreach (var (from, to) in windows)
        {
            long windowEndUs = t0 + ((((day[from].TimeUs - t0) / BatchUs) + 1) * BatchUs);
            bool late = random.NextDouble() < LateShare;
            bool resent = random.NextDouble() < ResentShare;
            long arrival = windowEndUs + (late ? LateUs : 1_000_000);
            sends.Add((arrival, order++, from, to));
            if (resent)
            {
                sends.Add((Math.Max(arrival, windowEndUs + 20_000_000), order++, from, to));
            }
        }

        sends.Sort((a, b) => a.ArrivalUs != b.ArrivalUs ? a.ArrivalUs.CompareTo(b.ArrivalUs) : a.Order.CompareTo(b.Order));
        var stored = new bool[day.Length];
        int head = -1;
        int statesWritten = 0;
        var deliveries = new List<StorageProbeDelivery>(sends.Count);
        foreach (var send in sends)
        {
            var fresh = new List<int>();
            for (int i = send.From; i < send.To; i++)
            {
                if (!stored[i])
                {
                    fresh.Add(i);
                }
            }

            int[] judged;
            if (fresh.Count > 0 && fresh[0] < head)
            {
                var again = new List<int>();
                for (int i = fresh[0]; i <= Math.Max(head, fresh[^1]); i++)
                {
                    if (stored[i] || (i >= send.From && i < send.To))
                    {
                        again.Add(i);
                    }
                }

                judged = [.. again];
            }
            else
            {
                judged = [.. fresh];
            }

            foreach (int i in fresh)
            {
                stored[i] = true;
            }

            if (fresh.Count > 0)
            {
                head = Math.Max(head, fresh[^1]);
            }

            int statesFrom = statesWritten;
            while (head >= 0 && statesWritten < FusedStates.Length && FusedStates[statesWritten].TimeUs <= day[head].TimeUs)
            {
                statesWritten++;
            }

            deliveries.Add(new StorageProbeDelivery(send.From, send.To, send.ArrivalUs, [.. fresh], judged, statesFrom, statesWritten));
        }

        return deliveries;
    }
}
