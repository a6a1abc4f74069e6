// Light reads that survive a restart of PostgreSQL: one retry on a fresh connection, then 503 with Retry-After.
using FusionService.Storage.Failures;
using Npgsql;

namespace FusionService.Database;

/// <summary>
/// An endpoint filter for reads that run a few short statements on the pools of <see cref="FusionDatabase"/>: after a
/// restart of PostgreSQL the pools still hold connections the server closed, and the first statement on each fails
/// although the server is back. The filter drops both pools' idle connections and runs the handler once more; if that
/// fails too with a database error that may pass, the answer is 503 with Retry-After instead of 500. Only for handlers
/// that write nothing before they return (the retry runs the whole handler again). The history reads have their own
/// (<c>History/HeavyReadAdmission</c>).
/// </summary>
internal static class StaleConnectionRetry
{
    private const int RetryAfterS = 5;

    /// <summary>Adds the retry to the endpoint and declares its 503.</summary>
    public static RouteHandlerBuilder RetryOnStaleConnection(this RouteHandlerBuilder builder)
    {
        builder.AddEndpointFilter(async (context, next) =>
        {
            var http = context.HttpContext;
            try
            {
                return await next(context).ConfigureAwait(false);
            }
            catch (NpgsqlException ex) when (!http.Response.HasStarted && !http.RequestAborted.IsCancellationRequested
                && ex is not PostgresException { SqlState: PostgresErrorCodes.QueryCanceled })
            {
                var database = http.RequestServices.GetRequiredService<FusionDatabase>();
                database.DataSource.Clear();
                database.ReadDataSource.Clear();
                try
                {
                    return await next(context).ConfigureAwait(false);
                }
                catch (Exception again) when (TransientDatabaseError.Is(again) && !http.Response.HasStarted && !http.RequestAborted.IsCancellationRequested)
                {
                    database.NoteFailure(again);
                    http.Response.Headers.RetryAfter = RetryAfterS.ToString(System.Globalization.CultureInfo.InvariantCulture);
                    return TypedResults.Problem(
                        title: "Service unavailable",
                        detail: "the store cannot be read now; retry later",
                        statusCode: StatusCodes.Status503ServiceUnavailable);
                }
            }
        });
        return builder.ProducesProblem(StatusCodes.Status503ServiceUnavailable);
    }
}
