// The one test for "this database failure may pass: keep the work and try again later".
using Npgsql;

namespace FusionService.Storage.Failures;

/// <summary>Tells a database failure that a later attempt may not meet from a programming error.</summary>
public static class TransientDatabaseError
{
    /// <summary>
    /// True for <see cref="NpgsqlException"/> (connection lost, server error, including <see cref="PostgresException"/>),
    /// <see cref="InvalidOperationException"/> (a connection or data source in the wrong state, for example while the
    /// server restarts or the pool is exhausted) and <see cref="TimeoutException"/> (connect or command timeout):
    /// the failures on which background work keeps its data and retries and a request is answered 503.
    /// </summary>
    /// <param name="exception">The caught exception.</param>
    public static bool Is(Exception exception) => exception is NpgsqlException or InvalidOperationException or TimeoutException;
}
