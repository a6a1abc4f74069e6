// Assembles the diagnostics of one vehicle from the store.
using FusionService.Estimation.Diagnostics;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using FusionService.Storage.Audit;
using FusionService.Storage.Measurements;

using FusionService.Http;

namespace FusionService.Audit;

/// <summary>
/// Builds a <see cref="DiagnosticsResponse"/>: outcome counts, duplicate counts, the mean NIS of the fused measurements
/// per sensor judged by <see cref="NisConsistencyTest"/>, the whiteness of their whitened innovations
/// (<see cref="InnovationWhitenessTest"/>, over the stored <c>w0</c>/<c>w1</c> of each verdict), latency percentiles, the calibration of the newest fused
/// state, GNSS outages (<see cref="GnssOutageDetector"/>) and track resets.
/// </summary>
public static class DiagnosticsReport
{
    private const double RadToDeg = 180.0 / Math.PI;

    private const string Caution =
        "Diagnostics of estimates: the NIS verdict tests whether the stated sensor accuracies and the filter's noise settings "
        + "agree with the data (95 % two-sided chi-square interval for the mean NIS), and the whiteness test whether the "
        + "innovations are independent from one measurement to the next (Ljung-Box, 5 %); correlated innovations mean the "
        + "stated uncertainty is too small even when the mean NIS looks right. Neither proves any single position. "
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

        NisAccumulator[] nisOf = [new(), new(), new(), new()];
        var dimensionSeen = new int[4];
        var mixed = new bool[4];
        var outcomeCounts = new Dictionary<(int Kind, OutcomeKind Outcome), long>();
        var resets = new List<long>();
        var whitened = new AutocorrelationAccumulator?[4, 2];
        await foreach (var sample in audit.VerdictsAsync(fleetId, vehicle, fromUs, toUs, cancellationToken).ConfigureAwait(false))
        {
            int k = sample.Kind;
            outcomeCounts[(k, sample.Outcome)] = outcomeCounts.GetValueOrDefault((k, sample.Outcome)) + 1;
            if (sample.TrackReset)
            {
                resets.Add(sample.TimeUs);
            }

            // NIS of the fused measurements only: accepted, not a track reset, NIS present.
            if (k is < 0 or > 3 || sample.Outcome != OutcomeKind.Accepted || sample.TrackReset || sample.Nis is not { } nis)
            {
                continue;
            }

            var m = MeasurementRows.ToMeasurement(sample);
            int dimension = processor.InnovationDimension(m);
            AddWhitened(whitened, k, 0, sample.W0, options.WhitenessLags);
            AddWhitened(whitened, k, 1, sample.W1, options.WhitenessLags);
            nisOf[k].Add(nis, dimension);
            mixed[k] |= dimensionSeen[k] != 0 && dimensionSeen[k] != dimension;
            dimensionSeen[k] = dimension;
        }

        var sensors = new List<SensorDiagnostics>();
        foreach (var kind in SensorNames.All)
        {
            int k = (int)kind;
            long Count(OutcomeKind outcome) => outcomeCounts.GetValueOrDefault((k, outcome));
            double? mean = null;
            NisIntervalResponse? interval = null;
            var verdict = ConsistencyVerdict.Insufficient;
            NisAccumulator nis = nisOf[k];
            if (nis.Count > 0)
            {
                mean = nis.Mean;
                (double lower, double upper) = nis.Interval();
                interval = new NisIntervalResponse(lower, upper);
                verdict = nis.Judge(options.NisMinimumCount);
            }

            var whiteness = Whiteness(kind, whitened, options);
            // A mean NIS inside its band says nothing about correlation: correlated innovations are not consistent.
            // A mean NIS outside its band is the plainer fault and keeps its name.
            string overall = whiteness?.Verdict == "correlated" && verdict is ConsistencyVerdict.Consistent or ConsistencyVerdict.Insufficient
                ? "correlated"
                : VerdictName(verdict);
            var l = latency.Where(x => x.Kind == k).Select(x => (LatencySummary?)x).FirstOrDefault();
            sensors.Add(new SensorDiagnostics(
                SensorNames.Of(kind),
                Count(OutcomeKind.Accepted),
                Count(OutcomeKind.Gated),
                duplicateTotals.GetValueOrDefault((short)k),
                Count(OutcomeKind.TooLate),
                mean,
                nis.Count > 0 && !mixed[k] ? dimensionSeen[k] : null,
                nis.Count,
                interval,
                overall,
                l is { } s ? new LatencyPercentilesResponse(s.P50Ms, s.P95Ms, s.P99Ms) : null,
                VerdictName(verdict),
                whiteness));
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

    /// <summary>The API name of a whiteness verdict: white, correlated or insufficient_data.</summary>
    public static string WhitenessName(WhitenessVerdict verdict) => verdict switch
    {
        WhitenessVerdict.White => "white",
        WhitenessVerdict.Correlated => "correlated",
        _ => "insufficient_data",
    };

    /// <summary>The API name of innovation component <paramref name="component"/> (0 or 1) of <paramref name="kind"/>.</summary>
    public static string ComponentName(SensorKind kind, int component) => (kind, component) switch
    {
        (SensorKind.GnssPosition, 0) => "east",
        (SensorKind.GnssPosition, _) => "north",
        (SensorKind.GnssVelocity, 0) => "speed",
        (SensorKind.GnssVelocity, _) => "heading",
        (SensorKind.WheelSpeed, _) => "speed",
        (SensorKind.Imu, 0) => "yaw_rate",
        _ => "acceleration",
    };

    private static void AddWhitened(AutocorrelationAccumulator?[,] whitened, int kind, int component, float? w, int lags)
    {
        if (w is not { } value || !float.IsFinite(value))
        {
            return;
        }

        (whitened[kind, component] ??= new AutocorrelationAccumulator(lags)).Add(value);
    }

    private static WhitenessResponse? Whiteness(SensorKind kind, AutocorrelationAccumulator?[,] whitened, AuditOptions options)
    {
        const double significance = 0.05;
        int k = (int)kind;
        int components = (whitened[k, 0] is null ? 0 : 1) + (whitened[k, 1] is null ? 0 : 1);
        if (components == 0)
        {
            return null;
        }

        // Bonferroni: each of m components at alpha / m keeps the sensor's false-alarm rate at most alpha.
        double each = significance / components;
        var results = new List<WhitenessComponentResponse>(components);
        bool anyCorrelated = false, allDecided = true;
        for (int c = 0; c < 2; c++)
        {
            if (whitened[k, c] is not { } accumulator)
            {
                continue;
            }

            var r = InnovationWhitenessTest.Test(accumulator, each, options.WhitenessMinimumCount);
            anyCorrelated |= r.Verdict == WhitenessVerdict.Correlated;
            allDecided &= r.Verdict != WhitenessVerdict.TooFewSamples;
            results.Add(new WhitenessComponentResponse(
                ComponentName(kind, c),
                r.SampleCount,
                Finite(r.Lag1),
                Finite(r.BandHalfWidth),
                [.. r.Autocorrelation.Select(Finite)],
                r.LagsOutsideBand,
                Finite(r.LjungBoxQ),
                r.CriticalValue,
                r.Dof,
                each,
                WhitenessName(r.Verdict)));
        }

        string verdict = anyCorrelated ? "correlated" : allDecided ? "white" : "insufficient_data";
        return new WhitenessResponse(verdict, options.WhitenessLags, significance, results);
    }

    private static double? Finite(double value) => double.IsFinite(value) ? value : null;

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
