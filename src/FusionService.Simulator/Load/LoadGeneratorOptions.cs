// Settings of the load generator.
namespace FusionService.Simulator.Load;

/// <summary>Settings of <see cref="LoadGenerator"/>. Defaults are invented benchmark values.</summary>
public sealed record LoadGeneratorOptions
{
    /// <summary>Full address to POST NDJSON batches to, e.g. http://127.0.0.1:5080/v1/telemetry. Required.</summary>
    public required Uri Endpoint { get; init; }

    /// <summary>Write key sent as <c>Authorization: Bearer {key}</c>; null sends no header.</summary>
    public string? ApiKey { get; init; }

    /// <summary>Number of synthetic vehicles the messages are spread over (round robin). Default 1000.</summary>
    public int VehicleCount { get; init; } = 1000;

    /// <summary>Messages per batch (one POST). Default 500.</summary>
    public int BatchSize { get; init; } = 500;

    /// <summary>Batches to send in all. Default 200.</summary>
    public int TotalBatches { get; init; } = 200;

    /// <summary>Batches in flight at once. Default 8.</summary>
    public int Concurrency { get; init; } = 8;

    /// <summary>Time of the first synthetic sample, Unix microseconds. Default 2026-12-02T08:00:00Z.</summary>
    public long StartTimeUs { get; init; } = Fleet.DemoFleetOptions.DefaultStartTimeUs;

    /// <summary>When set, batches are posted until this much time has passed and <see cref="TotalBatches"/> is ignored.</summary>
    public TimeSpan? Duration { get; init; }

    /// <summary>How messages are grouped into batches. Default <see cref="LoadShape.PerVehicle"/>.</summary>
    public LoadShape Shape { get; init; } = LoadShape.PerVehicle;

    /// <summary>
    /// With <see cref="LoadShape.Interleaved"/>: successive messages of one vehicle before the next vehicle's (a gateway
    /// that forwards each van's last few samples together). Default 1, one message per vehicle in turn.
    /// </summary>
    public int VehicleRun { get; init; } = 1;

    /// <summary>
    /// When set, batch b is not sent before b x <see cref="BatchSize"/> / rate seconds into the run (an offered load in
    /// messages per second; still at most <see cref="Concurrency"/> in flight). Null sends as fast as answers come back.
    /// </summary>
    public double? MessagesPerSecond { get; init; }

    /// <summary>Prefix of the synthetic vehicle ids ("load-000001"). Default "load-".</summary>
    public string VehiclePrefix { get; init; } = "load-";

    /// <summary>Throws <see cref="ArgumentException"/> naming the first inconsistent value.</summary>
    public void Validate()
    {
        ArgumentNullException.ThrowIfNull(Endpoint);
        if (!Endpoint.IsAbsoluteUri)
        {
            throw new ArgumentException($"Endpoint must be absolute, was {Endpoint}.", nameof(Endpoint));
        }

        ArgumentOutOfRangeException.ThrowIfLessThan(VehicleCount, 1);
        ArgumentOutOfRangeException.ThrowIfLessThan(BatchSize, 1);
        ArgumentOutOfRangeException.ThrowIfLessThan(TotalBatches, 1);
        ArgumentOutOfRangeException.ThrowIfLessThan(Concurrency, 1);
        ArgumentOutOfRangeException.ThrowIfLessThan(VehicleRun, 1);
        if (Duration is { } duration && duration <= TimeSpan.Zero)
        {
            throw new ArgumentException($"Duration must be positive, was {duration}.", nameof(Duration));
        }

        if (MessagesPerSecond is { } rate && !(rate > 0 && double.IsFinite(rate)))
        {
            throw new ArgumentException($"MessagesPerSecond must be positive and finite, was {rate}.", nameof(MessagesPerSecond));
        }

        if (!Enum.IsDefined(Shape))
        {
            throw new ArgumentException($"Shape {Shape} is not one of {string.Join(", ", Enum.GetNames<LoadShape>())}.", nameof(Shape));
        }

        ArgumentNullException.ThrowIfNull(VehiclePrefix);
    }
}
