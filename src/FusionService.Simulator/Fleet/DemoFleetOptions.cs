// Settings of the demo fleet.
using FusionService.Scenarios;

namespace FusionService.Simulator.Fleet;

/// <summary>Settings of a <see cref="DemoFleet"/>. All defaults are invented demo values.</summary>
public sealed record DemoFleetOptions
{
    /// <summary>Default fleet start: 2026-12-02T08:00:00Z, Unix microseconds.</summary>
    public const long DefaultStartTimeUs = 1_796_198_400_000_000;

    /// <summary>Number of vans, 8 to 20 (so that every van-specific fault has its van). Default 12.</summary>
    public int VanCount { get; init; } = 12;

    /// <summary>Seed of everything random in the fleet. Default 20261202.</summary>
    public int Seed { get; init; } = 20261202;

    /// <summary>Delivery stops per van, 3 to 20 (the tow van is lifted at its third stop). Default 8.</summary>
    public int StopsPerVan { get; init; } = 8;

    /// <summary>Shortest stop, seconds. Default 120.</summary>
    public double MinDwellS { get; init; } = 120.0;

    /// <summary>Longest stop, seconds. Default 300.</summary>
    public double MaxDwellS { get; init; } = 300.0;

    /// <summary>Time the first van leaves the depot, Unix microseconds. Default <see cref="DefaultStartTimeUs"/>.</summary>
    public long StartTimeUs { get; init; } = DefaultStartTimeUs;

    /// <summary>Gap between two vans leaving the depot, whole seconds, 0 to 600. Default 60.</summary>
    public int DepartureSpacingS { get; init; } = 60;

    /// <summary>
    /// Upload behaviour of every tracker: batches every 5-30 s, 0.2-3 s network delay, 5 % of batches sent twice
    /// (lost acknowledgement), 3 % of batches held back 2-6 minutes. Each van draws its own schedule from the fleet seed.
    /// </summary>
    public UploaderOptions Upload { get; init; } = new UploaderOptions
    {
        BatchIntervalMinS = 5.0,
        BatchIntervalMaxS = 30.0,
        NetworkDelayMinS = 0.2,
        NetworkDelayMaxS = 3.0,
        RetryProbability = 0.05,
        LateProbability = 0.03,
        LateDelayMinS = 120.0,
        LateDelayMaxS = 360.0,
    };

    /// <summary>Throws <see cref="ArgumentException"/> naming the first inconsistent value.</summary>
    public void Validate()
    {
        if (VanCount is < 8 or > 20)
        {
            throw new ArgumentException($"VanCount must be within [8, 20], was {VanCount}.", nameof(VanCount));
        }

        if (StopsPerVan is < 3 or > 20)
        {
            throw new ArgumentException($"StopsPerVan must be within [3, 20], was {StopsPerVan}.", nameof(StopsPerVan));
        }

        if (!(MinDwellS >= 60.0 && MaxDwellS >= MinDwellS && MaxDwellS <= 3600.0))
        {
            throw new ArgumentException($"dwell range [{MinDwellS}, {MaxDwellS}] s must be ordered within [60, 3600].", nameof(MaxDwellS));
        }

        if (DepartureSpacingS is < 0 or > 600)
        {
            throw new ArgumentException($"DepartureSpacingS must be within [0, 600], was {DepartureSpacingS}.", nameof(DepartureSpacingS));
        }

        ArgumentNullException.ThrowIfNull(Upload);
        Upload.Validate();
    }
}
