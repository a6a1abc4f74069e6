// Streams a track document to the response body.

namespace FusionService.History;

/// <summary>
/// Writes a track document as its points are produced: the format writer fills a small buffer that is copied to the
/// response body (and flushed) every <c>flushEvery</c> points, so the document is never held whole.
/// </summary>
internal sealed class TrackStreamResult(TrackHeader header, TrackFormat format, IAsyncEnumerable<TrackPoint> points, int flushEvery) : IResult
{
    /// <summary>Points written (for tests and logs).</summary>
    public int Written { get; private set; }

    /// <inheritdoc />
    public async Task ExecuteAsync(HttpContext httpContext)
    {
        ArgumentNullException.ThrowIfNull(httpContext);
        var buffer = new MemoryStream();
        await using (buffer.ConfigureAwait(false))
        {
            var writer = TrackFormatWriter.Create(format, buffer);
            var response = httpContext.Response;
            response.StatusCode = StatusCodes.Status200OK;
            response.ContentType = writer.ContentType;
            response.Headers.CacheControl = "no-store";
            FusionService.Http.LocationCaution.AddHeader(httpContext);
            var cancel = httpContext.RequestAborted;
            writer.Begin(header);
            await foreach (var point in points.WithCancellation(cancel).ConfigureAwait(false))
            {
                writer.Point(point);
                if (++Written % flushEvery == 0)
                {
                    await CopyAsync(writer, buffer, response, cancel).ConfigureAwait(false);
                }
            }

            writer.End();
            await CopyAsync(writer, buffer, response, cancel).ConfigureAwait(false);
        }
    }

    private static async Task CopyAsync(TrackFormatWriter writer, MemoryStream buffer, HttpResponse response, CancellationToken cancel)
    {
        writer.Flush();
        if (buffer.Length == 0)
        {
            return;
        }

        await response.Body.WriteAsync(buffer.GetBuffer().AsMemory(0, (int)buffer.Length), cancel).ConfigureAwait(false);
        await response.Body.FlushAsync(cancel).ConfigureAwait(false);
        buffer.SetLength(0);
    }
}
