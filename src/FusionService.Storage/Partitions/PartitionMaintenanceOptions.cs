// Settings of the daily-partition upkeep.
namespace FusionService.Storage.Partitions;

/// <summary>How many daily partitions <see cref="PartitionMaintainer"/> keeps around "today" (UTC).</summary>
public sealed class PartitionMaintenanceOptions
{
    /// <summary>Days before today that get a partition, so late measurements still find one. Default 2;
    /// must not exceed <see cref="RetentionDays"/>.</summary>
    public int DaysBack { get; set; } = 2;

    /// <summary>Days after today that get a partition, so midnight and clock skew never meet a missing one.
    /// Default 3.</summary>
    public int DaysAhead { get; set; } = 3;

    /// <summary>Partitions of days before today minus this many days are dropped with all their rows; today and
    /// the <c>RetentionDays</c> days before it are kept. Default 30.</summary>
    public int RetentionDays { get; set; } = 30;
}
