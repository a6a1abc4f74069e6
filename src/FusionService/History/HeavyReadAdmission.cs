// The endpoint filter that admits history reads through the HeavyReadGate.
using System.Globalization;
using FusionService.Database;
using FusionService.Security;
using Microsoft.Extensions.Options;
using Npgsql;

namespace FusionService.History;

/// <summary>
/// Marks an endpoint as a history read: it runs only with a slot of <see cref="HeavyReadGate"/> (after waiting up to
/// <c>HeavyReads:QueueTimeoutMs</c>: 429 when the caller's fleet still had its maximum running, 503 when the process
/// had, both with Retry-After), held until the response is written; a read cancelled by the statement timeout or cut off from the database before the answer began is 503.
/// </summary>
public static class HeavyReadAdmission
{
    /// <summary>Applies the admission to <paramref name="builder"/> (after the key filter, which it needs).</summary>
    public static RouteHandlerBuilder AdmitAsHeavyRead(this RouteHandlerBuilder builder)
    {
        ArgumentNullException.ThrowIfNull(builder);
        builder.AddEndpointFilter(async (context, next) =>
        {
            var http = context.HttpContext;
            var caller = ApiCaller.Of(http);
            var gate = http.RequestServices.GetRequiredService<HeavyReadGate>();
            var settings = http.RequestServices.GetRequiredService<IOptions<HeavyReadOptions>>().Value;
            var (slot, refusal) = await gate.TryEnterAsync(caller.FleetId, http.RequestAborted).ConfigureAwait(false);
            if (slot is null)
            {
                http.Response.Headers.RetryAfter = settings.RetryAfterS.ToString(CultureInfo.InvariantCulture);
                return refusal == HeavyReadRefusal.FleetBusy
                    ? TypedResults.Problem(
                        title: "Too many requests",
                        detail: string.Create(CultureInfo.InvariantCulture,
                            $"history reads of this fleet: {settings.MaxConcurrentPerFleet} were running, the most at once (HeavyReads:MaxConcurrentPerFleet), for {settings.QueueTimeoutMs} ms; retry after {settings.RetryAfterS} s"),
                        statusCode: StatusCodes.Status429TooManyRequests,
                        extensions: new Dictionary<string, object?> { ["limit"] = "HeavyReads:MaxConcurrentPerFleet", ["retry_after_s"] = settings.RetryAfterS })
                    : TypedResults.Problem(
                        title: "Service busy",
                        detail: string.Create(CultureInfo.InvariantCulture,
                            $"history reads: {settings.MaxConcurrent} were running, the most at once (HeavyReads:MaxConcurrent), for {settings.QueueTimeoutMs} ms; retry after {settings.RetryAfterS} s"),
                        statusCode: StatusCodes.Status503ServiceUnavailable,
                        extensions: new Dictionary<string, object?> { ["limit"] = "HeavyReads:MaxConcurrent", ["retry_after_s"] = settings.RetryAfterS });
            }

            http.Response.RegisterForDispose(slot);
            try
            {
                try
                {
                    return await next(context).ConfigureAwait(false);
                }
                catch (NpgsqlException ex) when (!http.Response.HasStarted && !http.RequestAborted.IsCancellationRequested
                    && ex is not PostgresException { SqlState: PostgresErrorCodes.QueryCanceled })
                {
                    // After a restart of PostgreSQL the read pool still holds connections the server closed; the first read
                    // on each fails although the server is back. Nothing has been sent yet: drop the pool's idle
                    // connections and read once more on a fresh one.
                    http.RequestServices.GetRequiredService<FusionDatabase>().ReadDataSource.Clear();
                    return await next(context).ConfigureAwait(false);
                }
            }
            catch (NpgsqlException ex) when (!http.Response.HasStarted && !http.RequestAborted.IsCancellationRequested)
            {
                var database = http.RequestServices.GetRequiredService<FusionDatabase>();
                bool timedOut = ex is PostgresException { SqlState: PostgresErrorCodes.QueryCanceled };
                if (!timedOut)
                {
                    database.NoteFailure(ex);
                }

                http.Response.Headers.RetryAfter = settings.RetryAfterS.ToString(CultureInfo.InvariantCulture);
                return TypedResults.Problem(
                    title: "Service unavailable",
                    detail: timedOut
                        ? string.Create(CultureInfo.InvariantCulture, $"the history read ran longer than {database.Options.ReadStatementTimeoutS} s (Database:ReadStatementTimeoutS) and was cancelled; ask for a shorter window")
                        : "the history store cannot be read now; retry later",
                    statusCode: StatusCodes.Status503ServiceUnavailable);
            }
        });
        // The 429 is declared by the key filter already.
        return builder.ProducesProblem(StatusCodes.Status503ServiceUnavailable);
    }
}
