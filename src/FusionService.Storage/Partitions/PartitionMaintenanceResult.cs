// What one round of partition upkeep changed.
namespace FusionService.Storage.Partitions;

/// <summary>Partitions one call of <see cref="PartitionMaintainer"/> created and dropped, and filter checkpoints it deleted.</summary>
/// <param name="Created">Names of the partitions created, in table then day order.</param>
/// <param name="Dropped">Names of the partitions dropped, in table then day order.</param>
/// <param name="CheckpointsDeleted">Filter checkpoints deleted with the retention (each vehicle keeps its newest).</param>
public readonly record struct PartitionMaintenanceResult(IReadOnlyList<string> Created, IReadOnlyList<string> Dropped, int CheckpointsDeleted = 0);
