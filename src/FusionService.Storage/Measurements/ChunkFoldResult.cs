// What one fold of closed windows did.
namespace FusionService.Storage.Measurements;

/// <summary>What <see cref="MeasurementChunkFolder.FoldAsync"/> did.</summary>
/// <param name="ChunksDeleted">Chunks folded away.</param>
/// <param name="ChunksWritten">Folded chunks written (one per window folded).</param>
/// <param name="Measurements">Measurements the folded chunks hold.</param>
public readonly record struct ChunkFoldResult(long ChunksDeleted, long ChunksWritten, long Measurements);
