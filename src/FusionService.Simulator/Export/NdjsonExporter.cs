// Writes the demo fleet's uploads as NDJSON files for replay.
using FusionService.Simulator.Fleet;
using FusionService.Simulator.Messages;

namespace FusionService.Simulator.Export;

/// <summary>
/// Writes one NDJSON file per van, "{vehicle id}.ndjson", holding the van's messages in the order the server receives
/// them (<see cref="DemoVan.BuildBatches"/>: batches, network delays, late uploads, and retry copies that repeat a
/// whole batch with the same ids). Byte-identical for the same fleet options.
/// </summary>
public static class NdjsonExporter
{
    /// <summary>File name extension of the written files.</summary>
    public const string Extension = ".ndjson";

    /// <summary>Writes the files; existing files of the same names are replaced.</summary>
    /// <param name="fleet">The fleet.</param>
    /// <param name="directory">Target folder; created when missing.</param>
    /// <param name="cancellationToken">Stops between vans and batches.</param>
    /// <returns>The written paths, in van order.</returns>
    public static async Task<IReadOnlyList<string>> WriteAsync(DemoFleet fleet, string directory, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(fleet);
        ArgumentException.ThrowIfNullOrEmpty(directory);
        Directory.CreateDirectory(directory);
        var paths = new List<string>(fleet.Vans.Count);
        foreach (DemoVan van in fleet.Vans)
        {
            string path = Path.Combine(directory, van.Id + Extension);
            await using (var stream = new FileStream(path, FileMode.Create, FileAccess.Write, FileShare.None, 1 << 16, useAsync: true))
            {
                await WriteVanAsync(van, stream, cancellationToken).ConfigureAwait(false);
            }

            paths.Add(path);
        }

        return paths;
    }

    /// <summary>Writes one van's messages in arrival order to <paramref name="stream"/> as NDJSON.</summary>
    /// <param name="van">The van.</param>
    /// <param name="stream">Destination (not closed).</param>
    /// <param name="cancellationToken">Stops between batches.</param>
    public static async Task WriteVanAsync(DemoVan van, Stream stream, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(van);
        ArgumentNullException.ThrowIfNull(stream);
        foreach (TelemetryBatch batch in van.BuildBatches())
        {
            cancellationToken.ThrowIfCancellationRequested();
            await stream.WriteAsync(TelemetryJson.ToNdjson(batch.Messages), cancellationToken).ConfigureAwait(false);
        }

        await stream.FlushAsync(cancellationToken).ConfigureAwait(false);
    }
}
