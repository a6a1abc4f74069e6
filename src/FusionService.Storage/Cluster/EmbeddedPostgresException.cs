// Failure to find, initialise, start or stop the private PostgreSQL cluster.
namespace FusionService.Storage.Cluster;

/// <summary>
/// Thrown when <see cref="EmbeddedPostgres"/> cannot find the PostgreSQL binaries, initialise a data directory,
/// start or stop the server. The message names what is missing and quotes the tool's own error output.
/// </summary>
public sealed class EmbeddedPostgresException : Exception
{
    /// <summary>Creates an exception with no message.</summary>
    public EmbeddedPostgresException()
    {
    }

    /// <summary>Creates an exception with <paramref name="message"/>.</summary>
    /// <param name="message">What failed and why, including the tool's standard error when there is one.</param>
    public EmbeddedPostgresException(string message)
        : base(message)
    {
    }

    /// <summary>Creates an exception with <paramref name="message"/> caused by <paramref name="innerException"/>.</summary>
    /// <param name="message">What failed and why.</param>
    /// <param name="innerException">The underlying failure.</param>
    public EmbeddedPostgresException(string message, Exception innerException)
        : base(message, innerException)
    {
    }
}
