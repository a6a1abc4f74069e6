// How a simulated tracker uploads its measurements.
namespace FusionService.Scenarios;

/// <summary>
/// Upload behaviour of a simulated tracker for <see cref="Uploader.Upload"/>. Defaults are invented demo values in the
/// range of common practice (reported every 5-60 s while moving, batched and often late).
/// </summary>
public sealed record UploaderOptions
{
    /// <summary>Shortest time between batch uploads, seconds. Default 5.</summary>
    public double BatchIntervalMinS { get; init; } = 5.0;

    /// <summary>Longest time between batch uploads, seconds (each interval uniform in [min, max)). Default 30.</summary>
    public double BatchIntervalMaxS { get; init; } = 30.0;

    /// <summary>Shortest network delay, seconds. Default 0.2.</summary>
    public double NetworkDelayMinS { get; init; } = 0.2;

    /// <summary>Longest network delay, seconds (each batch uniform in [min, max)). Default 3.</summary>
    public double NetworkDelayMaxS { get; init; } = 3.0;

    /// <summary>Probability that a batch is sent twice (acknowledgement lost), in [0, 1]. Default 0.05.</summary>
    public double RetryProbability { get; init; } = 0.05;

    /// <summary>Shortest wait before the copy of a retried batch arrives, seconds after the original. Default 5.</summary>
    public double RetryDelayMinS { get; init; } = 5.0;

    /// <summary>Longest wait before the copy of a retried batch arrives, seconds. Default 30.</summary>
    public double RetryDelayMaxS { get; init; } = 30.0;

    /// <summary>Probability that a batch is held back (no coverage, tracker asleep), in [0, 1]. Default 0.</summary>
    public double LateProbability { get; init; }

    /// <summary>Shortest extra delay of a late batch, seconds. Default 120.</summary>
    public double LateDelayMinS { get; init; } = 120.0;

    /// <summary>Longest extra delay of a late batch, seconds. Default 600.</summary>
    public double LateDelayMaxS { get; init; } = 600.0;

    /// <summary>
    /// When set, bounds the lag: every measurement arrives at most this many seconds (of measurement time) behind the
    /// newest measurement delivered before it; deliveries that would break it are moved earlier (never before their
    /// batch exists). Must be at least <see cref="BatchIntervalMaxS"/>. Default null (unbounded).
    /// </summary>
    public double? MaxLagWindowS { get; init; }

    /// <summary>Throws <see cref="ArgumentException"/> naming the first inconsistent value.</summary>
    public void Validate()
    {
        Range(BatchIntervalMinS, BatchIntervalMaxS, nameof(BatchIntervalMaxS), positiveMin: true);
        Range(NetworkDelayMinS, NetworkDelayMaxS, nameof(NetworkDelayMaxS), positiveMin: false);
        Range(RetryDelayMinS, RetryDelayMaxS, nameof(RetryDelayMaxS), positiveMin: false);
        Range(LateDelayMinS, LateDelayMaxS, nameof(LateDelayMaxS), positiveMin: false);
        Probability(RetryProbability, nameof(RetryProbability));
        Probability(LateProbability, nameof(LateProbability));
        if (MaxLagWindowS is double w && (!double.IsFinite(w) || w < BatchIntervalMaxS))
        {
            throw new ArgumentException($"MaxLagWindowS must be finite and at least BatchIntervalMaxS, was {w}.", nameof(MaxLagWindowS));
        }
    }

    private static void Range(double min, double max, string name, bool positiveMin)
    {
        if (!double.IsFinite(min) || !double.IsFinite(max) || min < 0 || (positiveMin && min <= 0) || max < min)
        {
            throw new ArgumentException($"{name}: range [{min}, {max}] must be finite, non-negative (positive for batch intervals) and ordered.", name);
        }
    }

    private static void Probability(double p, string name)
    {
        if (!(p >= 0 && p <= 1))
        {
            throw new ArgumentException($"{name} must be within [0, 1], was {p}.", name);
        }
    }
}
