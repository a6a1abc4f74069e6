// The ingest cannot take more work right now.
namespace FusionService.Ingest;

/// <summary>The write queue is full or the database cannot be reached; the client should retry later (503).</summary>
public sealed class ServiceUnavailableException : Exception
{
    /// <summary>Creates the exception.</summary>
    public ServiceUnavailableException()
    {
    }

    /// <summary>Creates the exception with a reason.</summary>
    public ServiceUnavailableException(string message)
        : base(message)
    {
    }

    /// <summary>Creates the exception with a reason and its cause.</summary>
    public ServiceUnavailableException(string message, Exception innerException)
        : base(message, innerException)
    {
    }
}
