// Assembles the diagnostics of one vehicle from the store.
using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using FusionService.Storage.Audit;
using StoredOutcome = FusionService.Storage.Measurements.MeasurementOutcome;

using FusionService.Http;

namespace FusionService.Audit;

/// <summary>
/// Builds a <see cref="DiagnosticsResponse"/>: outcome counts, duplicate counts, the mean NIS of the fused measurements
/// per sensor judged by <see cref="NisConsistencyTest"/>, latency percentiles, the calibration of the newest fused
/// state, GNSS outages (<see cref="GnssOutageDetector"/>) and track resets.
/// </summary>
public static class DiagnosticsReport
{
    private const double RadToDeg = 180.0 / Math.PI;

    private const string Caution =
        "Diagnostics of estimates: the NIS verdict tests whether the stated sensor accuracies and the filter's noise settings "
        + "agree with the data (95 % two-sided chi-square interval for the mean NIS); it does not prove any single position. "
        + "Duplicates are counted per UTC day of measurement time over the whole days the window touches.";

    /// <summary>Builds the report of [<paramref name="fromUs"/>, <paramref name="toUs"/>) (Unix microseconds).</summary>
    public static async Task<DiagnosticsResponse> BuildAsync(
        AuditRepository audit,
        DuplicateCountRepository duplicates,
        TrackProcessor processor,
        AuditOptions options,
        Guid fleetId,
        string vehicle,
        long fromUs,
        long toUs,
        CancellationToken cancellationToken)
    {
        var duplicateTotals = await duplicates.TotalsAsync(fleetId, vehicle, fromUs, toUs, cancellationToken).ConfigureAwait(false);
        var latency = await audit.LatencyAsync(fleetId, vehicle, fromUs, toUs, cancellationToken).ConfigureAwait(false);

        var nisCount = new long[4];
        var nisSum = new double[4];
        var nisDof = new long[4];
        var dimensionSeen = new int[4];
        var mixed = new bool[4];
        var outcomeCounts = new Dictionary<(int Kind, StoredOutcome Outcome), long>();
        var resets = new List<long>();
        await foreach (var sample in audit.VerdictsAsync(fleetId, vehicle, fromUs, toUs, cancellationToken).ConfigureAwait(false))
        {
            int k = sample.Kind;
            outcomeCounts[(k, sample.Outcome)] = outcomeCounts.GetValueOrDefault((k, sample.Outcome)) + 1;
            if (sample.TrackReset)
            {
                resets.Add(sample.TimeUs);
            }

            // NIS of the fused measurements only: accepted, not a track reset, NIS present.
            if (k is < 0 or > 3 || sample.Outcome != StoredOutcome.Accepted || sample.TrackReset || sample.Nis is not { } nis)
            {
                continue;
            }

            var m = Measurement.FromStored(0, (ulong)(byte)k << 56, sample.V0, sample.V1 ?? double.NaN, 0f);
            int dimension = processor.InnovationDimension(m);
            nisCount[k]++;
            nisSum[k] += nis;
            nisDof[k] += dimension;
            mixed[k] |= dimensionSeen[k] != 0 && dimensionSeen[k] != dimension;
            dimensionSeen[k] = dimension;
        }

        var sensors = new List<SensorDiagnostics>();
        foreach (var kind in SensorNames.All)
        {
            int k = (int)kind;
            long Count(StoredOutcome outcome) => outcomeCounts.GetValueOrDefault((k, outcome));
            double? mean = null;
            NisIntervalResponse? interval = null;
            var verdict = ConsistencyVerdict.Insufficient;
            if (nisCount[k] > 0)
            {
                int n = checked((int)nisCount[k]);
                int dof = checked((int)nisDof[k]);
                mean = nisSum[k] / n;
                (double lower, double upper) = NisConsistencyTest.Interval(n, dof);
                interval = new NisIntervalResponse(lower, upper);
                verdict = NisConsistencyTest.Judge(mean.Value, n, dof, options.NisMinimumCount);
            }

            var l = latency.Where(x => x.Kind == k).Select(x => (LatencySummary?)x).FirstOrDefault();
            sensors.Add(new SensorDiagnostics(
                SensorNames.Of(kind),
                Count(StoredOutcome.Accepted),
                Count(StoredOutcome.Gated),
                duplicateTotals.GetValueOrDefault((short)k),
                Count(StoredOutcome.TooLate),
                mean,
                nisCount[k] > 0 && !mixed[k] ? dimensionSeen[k] : null,
                nisCount[k],
                interval,
                VerdictName(verdict),
                l is { } s ? new LatencyPercentilesResponse(s.P50Ms, s.P95Ms, s.P99Ms) : null));
        }

        CalibrationResponse? calibration = null;
        if (await audit.NewestFusedStateAsync(fleetId, vehicle, fromUs, toUs, cancellationToken).ConfigureAwait(false) is { } state)
        {
            var p = state.Covariance.Span;
            calibration = new CalibrationResponse(
                QueryTime.ToTime(state.TimeUs),
                state.WheelScale,
                Math.Sqrt(Math.Max(0, p[PackedDiagonalIndex(StateIndex.WheelScale)])),
                state.GyroBiasRps * RadToDeg,
                Math.Sqrt(Math.Max(0, p[PackedDiagonalIndex(StateIndex.GyroBiasRps)])) * RadToDeg);
        }

        var fixes = await audit.GnssFixTimesAsync(fleetId, vehicle, fromUs, toUs, cancellationToken).ConfigureAwait(false);
        var speeds = await audit.FusedSpeedsAsync(fleetId, vehicle, fromUs, toUs, cancellationToken).ConfigureAwait(false);
        var outages = GnssOutageDetector.Find(
            fixes.ToArray(), speeds.Select(s => s.TimeUs).ToArray(), speeds.Select(s => s.SpeedMps).ToArray(),
            options.GnssOutageMinGapS, options.MovingSpeedMps);

        return new DiagnosticsResponse(
            vehicle,
            QueryTime.ToTime(fromUs),
            QueryTime.ToTime(toUs),
            sensors,
            calibration,
            [.. outages.Select(o => new GnssOutageResponse(QueryTime.ToTime(o.FromUs), QueryTime.ToTime(o.ToUs), o.DurationS))],
            [.. resets.Select(t => new TrackResetResponse(QueryTime.ToTime(t)))],
            Caution);
    }

    /// <summary>Index of the diagonal element (i, i) in the row-major packed upper triangle of the 8 x 8 covariance.</summary>
    public static int PackedDiagonalIndex(int i) => (i * StateIndex.VehicleCount) - (i * (i - 1) / 2);

    /// <summary>The API name of a verdict.</summary>
    public static string VerdictName(ConsistencyVerdict verdict) => verdict switch
    {
        ConsistencyVerdict.Consistent => "consistent",
        ConsistencyVerdict.TooOptimistic => "too_optimistic",
        ConsistencyVerdict.TooPessimistic => "too_pessimistic",
        _ => "insufficient_data",
    };
}
