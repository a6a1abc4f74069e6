// Answers a request Kestrel found malformed while the endpoint read it with that status, not 500.
using Microsoft.AspNetCore.Diagnostics;

namespace FusionService.Operations;

/// <summary>
/// Kestrel throws <see cref="BadHttpRequestException"/> from the request body when the client breaks HTTP while the
/// endpoint reads: a body shorter than its Content-Length (400), an invalid chunk size (400), a body over
/// Kestrel's size limit (413), a body too slow to arrive (408); an overflowing chunk size comes as an
/// <see cref="IOException"/> thrown by Kestrel's HTTP code (400). The exception carries the status; without this
/// handler the exception middleware would answer 500, blaming the service for the client's request.
/// </summary>
internal sealed class BadRequestExceptionHandler(IProblemDetailsService problems) : IExceptionHandler
{
    private const string KestrelHttpNamespace = "Microsoft.AspNetCore.Server.Kestrel.Core.Internal.Http";

    public async ValueTask<bool> TryHandleAsync(HttpContext httpContext, Exception exception, CancellationToken cancellationToken)
    {
        int status;
        if (exception is BadHttpRequestException bad)
        {
            status = bad.StatusCode;
        }
        else if (exception is IOException && exception.TargetSite?.DeclaringType?.Namespace == KestrelHttpNamespace)
        {
            // Kestrel's chunked-body parser reports a chunk size that overflows as an IOException ("Bad chunk size
            // data"), not as a BadHttpRequestException: it is the client's malformed body all the same.
            status = StatusCodes.Status400BadRequest;
        }
        else
        {
            return false;
        }

        if (httpContext.Response.HasStarted)
        {
            return false;
        }

        httpContext.Response.StatusCode = status;
        return await problems.TryWriteAsync(new ProblemDetailsContext
        {
            HttpContext = httpContext,
            Exception = exception,
            ProblemDetails =
            {
                Status = status,
                Title = status switch
                {
                    StatusCodes.Status413PayloadTooLarge => "Payload too large",
                    StatusCodes.Status408RequestTimeout => "Request timeout",
                    _ => "Bad request",
                },
                Detail = "body: " + exception.Message,
            },
        }).ConfigureAwait(false);
    }
}
