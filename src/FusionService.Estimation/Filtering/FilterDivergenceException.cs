namespace FusionService.Estimation.Filtering;

/// <summary>
/// Raised when the filter's covariance stops being symmetric positive definite or a value becomes non-finite;
/// the filter never returns NaN in its output instead.
/// </summary>
public sealed class FilterDivergenceException : Exception
{
    /// <summary>Creates the exception.</summary>
    public FilterDivergenceException()
    {
    }

    /// <summary>Creates the exception with a message saying what went wrong and where.</summary>
    public FilterDivergenceException(string message)
        : base(message)
    {
    }

    /// <summary>Creates the exception with a message and an inner exception.</summary>
    public FilterDivergenceException(string message, Exception innerException)
        : base(message, innerException)
    {
    }
}
