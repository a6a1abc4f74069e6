// Load for the ingest benchmark: synthetic vehicles, fixed-size NDJSON batches, throughput and acknowledgement latency.
using System.Diagnostics;
using System.Globalization;
using System.Net.Http.Headers;
using FusionService.Simulator.Messages;

namespace FusionService.Simulator.Load;

/// <summary>
/// Posts <see cref="LoadGeneratorOptions.TotalBatches"/> NDJSON batches of <see cref="LoadGeneratorOptions.BatchSize"/>
/// synthetic messages, <see cref="LoadGeneratorOptions.Concurrency"/> at a time, to any HTTP endpoint, and reports accepted
/// messages per second and the p50/p99 time to the answer (nearest-rank percentiles). Batches are not retried: a refused
/// batch counts as rejected.
/// </summary>
/// <remarks>
/// With <see cref="LoadShape.PerVehicle"/>, batch b belongs to vehicle b mod N and holds its steps
/// k = (b div N) x size + position; with <see cref="LoadShape.Interleaved"/>, message g of the run (g = batch x size +
/// position) is in run r = g div R of R = <see cref="LoadGeneratorOptions.VehicleRun"/> messages, which belongs to
/// vehicle r mod N, at step k = (r div N) x R + g mod R (with R = 1: vehicle g mod N, step g div N). Step k is at time start + k x 100 ms; every tenth step is a gnss fix on a straight eastward line at 10 m/s (longitude advanced by metres / (111 320 cos lat),
/// a flat-earth rule adequate for load only), the others alternate wheel (10 m/s) and imu (0 deg/s). Ids are unique.
/// </remarks>
public sealed class LoadGenerator
{
    private const double BaseLatitudeDeg = 46.12;
    private const double BaseLongitudeDeg = 170.47; // open sea, as the demo town (DemoFleet.DepotLongitudeDeg)
    private const long StepUs = 100_000;

    private readonly HttpClient _http;
    private readonly LoadGeneratorOptions _options;
    private long _messagesAccepted;
    private long _batchesRefused;

    /// <summary>Creates a generator.</summary>
    /// <param name="httpClient">Client (not disposed by the generator).</param>
    /// <param name="options">Settings, validated here.</param>
    public LoadGenerator(HttpClient httpClient, LoadGeneratorOptions options)
    {
        ArgumentNullException.ThrowIfNull(httpClient);
        ArgumentNullException.ThrowIfNull(options);
        options.Validate();
        _http = httpClient;
        _options = options;
    }

    /// <summary>Messages accepted so far in the current run (for progress output while it runs).</summary>
    public long MessagesAccepted => Interlocked.Read(ref _messagesAccepted);

    /// <summary>Batches refused so far in the current run.</summary>
    public long BatchesRefused => Interlocked.Read(ref _batchesRefused);

    /// <summary>The synthetic messages of batch <paramref name="batchNumber"/> (0-based).</summary>
    /// <param name="options">Settings.</param>
    /// <param name="batchNumber">Batch number, non-negative.</param>
    public static IReadOnlyList<TelemetryMessage> SyntheticBatch(LoadGeneratorOptions options, int batchNumber)
    {
        ArgumentNullException.ThrowIfNull(options);
        ArgumentOutOfRangeException.ThrowIfNegative(batchNumber);
        var messages = new TelemetryMessage[options.BatchSize];
        for (int j = 0; j < messages.Length; j++)
        {
            long g = ((long)batchNumber * options.BatchSize) + j;
            long run = g / options.VehicleRun;
            (long vehicle, long step) = options.Shape == LoadShape.Interleaved
                ? (run % options.VehicleCount, (run / options.VehicleCount * options.VehicleRun) + (g % options.VehicleRun))
                : (batchNumber % options.VehicleCount, ((long)(batchNumber / options.VehicleCount) * options.BatchSize) + j);
            string id = string.Create(CultureInfo.InvariantCulture, $"{options.VehiclePrefix}{vehicle:000000}");
            long timeUs = options.StartTimeUs + (step * StepUs);
            string messageId = string.Create(CultureInfo.InvariantCulture, $"{id}/{step}");
            if (step % 10 == 0)
            {
                double latDeg = BaseLatitudeDeg + (vehicle * 1e-4);
                double eastM = 10.0 * step * StepUs / 1e6;
                double lonDeg = BaseLongitudeDeg + (eastM / (111_320.0 * Math.Cos(latDeg * Math.PI / 180.0)));
                messages[j] = new TelemetryMessage(id, TelemetryKinds.Gnss, timeUs, messageId)
                {
                    LatDeg = latDeg,
                    LonDeg = lonDeg,
                    AccuracyM = 3.0,
                    AccuracyKind = TelemetryKinds.OneSigma,
                    SpeedMps = 10.0,
                    CourseDeg = 90.0,
                    SpeedAccuracyMps = 0.1,
                };
            }
            else if (step % 2 == 1)
            {
                messages[j] = new TelemetryMessage(id, TelemetryKinds.Wheel, timeUs, messageId) { SpeedMps = 10.0 };
            }
            else
            {
                messages[j] = new TelemetryMessage(id, TelemetryKinds.Imu, timeUs, messageId) { YawRateDps = 0.0, AccelMps2 = 0.0 };
            }
        }

        return messages;
    }

    /// <summary>Nearest-rank percentile of ascending <paramref name="sorted"/>: the value at rank ceil(p / 100 x n); NaN when empty.</summary>
    /// <param name="sorted">Values in ascending order.</param>
    /// <param name="percent">Percentile, in (0, 100].</param>
    public static double NearestRankPercentile(IReadOnlyList<double> sorted, double percent)
    {
        ArgumentNullException.ThrowIfNull(sorted);
        if (!(percent > 0 && percent <= 100))
        {
            throw new ArgumentOutOfRangeException(nameof(percent), percent, "percentile must be within (0, 100]");
        }

        if (sorted.Count == 0)
        {
            return double.NaN;
        }

        int rank = (int)Math.Ceiling(percent / 100.0 * sorted.Count);
        return sorted[Math.Clamp(rank, 1, sorted.Count) - 1];
    }

    /// <summary>Runs the load.</summary>
    /// <param name="cancellationToken">Stops the run (throws <see cref="OperationCanceledException"/>).</param>
    public async Task<LoadReport> RunAsync(CancellationToken cancellationToken = default)
    {
        int next = -1;
        long accepted = 0, rejected = 0;
        var latencies = new List<double>(_options.Duration is null ? _options.TotalBatches : 1024);
        var gate = new Lock();
        var clock = Stopwatch.StartNew();
        async Task WorkerAsync()
        {
            int b;
            while ((b = Interlocked.Increment(ref next)) >= 0
                && (_options.Duration is { } duration ? clock.Elapsed < duration : b < _options.TotalBatches))
            {
                byte[] body = TelemetryJson.ToNdjson(SyntheticBatch(_options, b));
                if (_options.MessagesPerSecond is { } rate)
                {
                    var due = TimeSpan.FromSeconds((double)b * _options.BatchSize / rate);
                    if (due > clock.Elapsed)
                    {
                        await Task.Delay(due - clock.Elapsed, cancellationToken).ConfigureAwait(false);
                    }
                }

                using var request = new HttpRequestMessage(HttpMethod.Post, _options.Endpoint) { Content = new ByteArrayContent(body) };
                request.Content.Headers.ContentType = new MediaTypeHeaderValue(TelemetryJson.NdjsonContentType);
                if (_options.ApiKey is not null)
                {
                    request.Headers.Authorization = new AuthenticationHeaderValue("Bearer", _options.ApiKey);
                }

                long started = Stopwatch.GetTimestamp();
                bool ok;
                try
                {
                    using HttpResponseMessage response = await _http.SendAsync(request, cancellationToken).ConfigureAwait(false);
                    ok = response.IsSuccessStatusCode;
                }
                catch (HttpRequestException)
                {
                    ok = false;
                }

                double ms = Stopwatch.GetElapsedTime(started).TotalMilliseconds;
                if (ok)
                {
                    Interlocked.Increment(ref accepted);
                    Interlocked.Add(ref _messagesAccepted, _options.BatchSize);
                    lock (gate)
                    {
                        latencies.Add(ms);
                    }
                }
                else
                {
                    Interlocked.Increment(ref rejected);
                    Interlocked.Increment(ref _batchesRefused);
                }
            }
        }

        await Task.WhenAll(Enumerable.Range(0, _options.Concurrency).Select(_ => WorkerAsync())).ConfigureAwait(false);
        clock.Stop();
        latencies.Sort();
        double seconds = clock.Elapsed.TotalSeconds;
        return new LoadReport(
            accepted,
            Interlocked.Read(ref _messagesAccepted),
            rejected,
            clock.Elapsed,
            seconds > 0 ? Interlocked.Read(ref _messagesAccepted) / seconds : 0.0,
            NearestRankPercentile(latencies, 50),
            NearestRankPercentile(latencies, 99));
    }
}
