// What one round of partition upkeep changed.
namespace FusionService.Storage.Partitions;

/// <summary>Partitions one call of <see cref="PartitionMaintainer"/> created and dropped.</summary>
/// <param name="Created">Names of the partitions created, in table then day order.</param>
/// <param name="Dropped">Names of the partitions dropped, in table then day order.</param>
public readonly record struct PartitionMaintenanceResult(IReadOnlyList<string> Created, IReadOnlyList<string> Dropped);
