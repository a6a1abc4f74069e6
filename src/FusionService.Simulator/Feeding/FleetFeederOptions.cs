// Settings of the fleet feeder.
namespace FusionService.Simulator.Feeding;

/// <summary>Settings of <see cref="FleetFeeder"/>.</summary>
public sealed record FleetFeederOptions
{
    /// <summary>Address of the service, e.g. http://127.0.0.1:5080/ (a path prefix is kept). Required.</summary>
    public required Uri BaseUrl { get; init; }

    /// <summary>Write key sent as <c>Authorization: Bearer {key}</c>. Required.</summary>
    public required string ApiKey { get; init; }

    /// <summary>HTTP POST or WebSocket. Default HTTP.</summary>
    public FeedTransport Transport { get; init; } = FeedTransport.Http;

    /// <summary>
    /// Scenario seconds per wall-clock second: a batch is sent (arrival time - first arrival) / factor after the start.
    /// Positive; <see cref="double.PositiveInfinity"/> sends as fast as allowed. Default 10.
    /// </summary>
    public double AccelerationFactor { get; init; } = 10.0;

    /// <summary>
    /// Scenario time, Unix microseconds, that the feeder's start stands for: batches that arrived before it are sent at
    /// once (in order, each van's one after another), later ones (arrival time - this) / <see cref="AccelerationFactor"/>
    /// after the start. Null (the default) takes the fleet's first arrival, so that nothing is sent at once.
    /// </summary>
    public long? PaceFromUs { get; init; }

    /// <summary>Largest number of batches in flight at once over all vans (each van sends its batches one after another). Default 4.</summary>
    public int MaxConcurrentRequests { get; init; } = 4;

    /// <summary>Attempts per batch before it counts as a failure (the first sending included). Default 6.</summary>
    public int MaxAttempts { get; init; } = 6;

    /// <summary>Back-off before the second attempt when the service gives no Retry-After; doubled per attempt. Default 0.5 s.</summary>
    public TimeSpan InitialBackoff { get; init; } = TimeSpan.FromSeconds(0.5);

    /// <summary>Longest back-off, and the largest Retry-After honoured. Default 30 s.</summary>
    public TimeSpan MaxBackoff { get; init; } = TimeSpan.FromSeconds(30);

    /// <summary>How long to wait for a WebSocket acknowledgement (and, separately, for the connection to open) before reconnecting and sending again. Default 30 s.</summary>
    public TimeSpan AckTimeout { get; init; } = TimeSpan.FromSeconds(30);

    /// <summary>Time between two progress reports. Default 1 s.</summary>
    public TimeSpan ProgressInterval { get; init; } = TimeSpan.FromSeconds(1);

    /// <summary>Throws <see cref="ArgumentException"/> naming the first inconsistent value.</summary>
    public void Validate()
    {
        ArgumentNullException.ThrowIfNull(BaseUrl);
        if (!BaseUrl.IsAbsoluteUri || (BaseUrl.Scheme != Uri.UriSchemeHttp && BaseUrl.Scheme != Uri.UriSchemeHttps))
        {
            throw new ArgumentException($"BaseUrl must be an absolute http or https address, was {BaseUrl}.", nameof(BaseUrl));
        }

        ArgumentException.ThrowIfNullOrEmpty(ApiKey);
        if (!(AccelerationFactor > 0))
        {
            throw new ArgumentException($"AccelerationFactor must be positive, was {AccelerationFactor}.", nameof(AccelerationFactor));
        }

        ArgumentOutOfRangeException.ThrowIfLessThan(MaxConcurrentRequests, 1);
        ArgumentOutOfRangeException.ThrowIfLessThan(MaxAttempts, 1);
        ArgumentOutOfRangeException.ThrowIfLessThan(InitialBackoff, TimeSpan.Zero);
        ArgumentOutOfRangeException.ThrowIfLessThan(MaxBackoff, InitialBackoff);
        ArgumentOutOfRangeException.ThrowIfLessThanOrEqual(AckTimeout, TimeSpan.Zero);
        ArgumentOutOfRangeException.ThrowIfLessThanOrEqual(ProgressInterval, TimeSpan.Zero);
    }
}
