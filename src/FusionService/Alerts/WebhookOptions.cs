// Settings of section Webhooks.
using System.ComponentModel.DataAnnotations;

namespace FusionService.Alerts;

/// <summary>
/// Settings of section <c>Webhooks</c>: how the dispatcher polls the outbox and retries. A failed attempt n (1, 2, ...)
/// is retried after min(<see cref="MaxDelayS"/>, <see cref="BaseDelayS"/> · 2^(n-1)) seconds, multiplied by a uniform
/// random factor in [1 - <see cref="JitterFraction"/>, 1 + <see cref="JitterFraction"/>] so that many failing deliveries
/// do not retry in lock-step. Deliveries are retried until they succeed or their subscription is deleted.
/// </summary>
public sealed class WebhookOptions
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "Webhooks";

    /// <summary>Whether this instance sends deliveries (rows stay in the outbox for another instance otherwise). Default true.</summary>
    public bool DispatcherEnabled { get; set; } = true;

    /// <summary>Timeout of one POST, seconds. Default 10.</summary>
    [Range(1, 300)]
    public double TimeoutS { get; set; } = 10;

    /// <summary>Delay after the first failure, seconds. Default 2.</summary>
    [Range(0.01, 3600)]
    public double BaseDelayS { get; set; } = 2;

    /// <summary>Longest delay between attempts, seconds. Default 3600.</summary>
    [Range(0.01, 86400)]
    public double MaxDelayS { get; set; } = 3600;

    /// <summary>Relative jitter of each delay, in [0, 1). Default 0.2.</summary>
    [Range(0, 0.99)]
    public double JitterFraction { get; set; } = 0.2;

    /// <summary>Milliseconds between outbox polls when nothing wakes the dispatcher. Default 1000.</summary>
    [Range(10, 600_000)]
    public int PollIntervalMs { get; set; } = 1000;

    /// <summary>How long a claimed row stays invisible to other claims while it is sent, seconds (above the timeout). Default 60.</summary>
    [Range(2, 3600)]
    public double LeaseS { get; set; } = 60;

    /// <summary>Rows claimed per poll. Default 32.</summary>
    [Range(1, 1000)]
    public int BatchSize { get; set; } = 32;

    /// <summary>Delay before attempt <paramref name="failedAttempts"/> + 1, given a uniform random number <paramref name="unit"/> in [0, 1).</summary>
    public TimeSpan BackoffDelay(int failedAttempts, double unit)
    {
        double exponent = Math.Min(Math.Max(failedAttempts, 1) - 1, 60);
        double seconds = Math.Min(MaxDelayS, BaseDelayS * Math.Pow(2, exponent));
        return TimeSpan.FromSeconds(seconds * (1 + (JitterFraction * ((2 * unit) - 1))));
    }
}
