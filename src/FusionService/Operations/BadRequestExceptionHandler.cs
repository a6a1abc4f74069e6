// Answers a request Kestrel found malformed while the endpoint read it with that status, not 500.
using Microsoft.AspNetCore.Diagnostics;

namespace FusionService.Operations;

/// <summary>
/// Kestrel throws <see cref="BadHttpRequestException"/> from the request body when the client breaks HTTP while the
/// endpoint reads: a body shorter than its Content-Length (400), an invalid chunk size (400), a body over
/// Kestrel's size limit (413), a body too slow to arrive (408). The exception carries the status; without this
/// handler the exception middleware would answer 500, blaming the service for the client's request.
/// </summary>
internal sealed class BadRequestExceptionHandler(IProblemDetailsService problems) : IExceptionHandler
{
    public async ValueTask<bool> TryHandleAsync(HttpContext httpContext, Exception exception, CancellationToken cancellationToken)
    {
        if (exception is not BadHttpRequestException bad || httpContext.Response.HasStarted)
        {
            return false;
        }

        httpContext.Response.StatusCode = bad.StatusCode;
        return await problems.TryWriteAsync(new ProblemDetailsContext
        {
            HttpContext = httpContext,
            Exception = exception,
            ProblemDetails =
            {
                Status = bad.StatusCode,
                Title = bad.StatusCode switch
                {
                    StatusCodes.Status413PayloadTooLarge => "Payload too large",
                    StatusCodes.Status408RequestTimeout => "Request timeout",
                    _ => "Bad request",
                },
                Detail = "body: " + bad.Message,
            },
        }).ConfigureAwait(false);
    }
}
