// Base of the streamed track formats.
using System.Globalization;

namespace FusionService.History;

/// <summary>
/// Writes one track document, point by point, into a buffer stream that <see cref="TrackStreamResult"/> empties into the
/// response body after every few hundred points (so no format is built whole in memory).
/// </summary>
internal abstract class TrackFormatWriter
{
    /// <summary>Media type of the document.</summary>
    public abstract string ContentType { get; }

    /// <summary>Writes everything before the first point.</summary>
    public abstract void Begin(TrackHeader header);

    /// <summary>Writes one point.</summary>
    public abstract void Point(in TrackPoint point);

    /// <summary>Writes everything after the last point.</summary>
    public abstract void End();

    /// <summary>Pushes what the formatter holds into the buffer stream.</summary>
    public abstract void Flush();

    /// <summary>The writer of <paramref name="format"/> over <paramref name="buffer"/>.</summary>
    public static TrackFormatWriter Create(TrackFormat format, Stream buffer) => format switch
    {
        TrackFormat.Json => new JsonTrackWriter(buffer),
        TrackFormat.GeoJson => new GeoJsonTrackWriter(buffer),
        TrackFormat.Gpx => new GpxTrackWriter(buffer),
        TrackFormat.Csv => new CsvTrackWriter(buffer),
        _ => throw new ArgumentOutOfRangeException(nameof(format), format, "unknown format"),
    };

    /// <summary>Invariant shortest round-trip text of a number.</summary>
    protected static string Number(double value) => value.ToString("R", CultureInfo.InvariantCulture);
}
