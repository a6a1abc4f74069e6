namespace FusionService.Estimation.Diagnostics;

/// <summary>Verdict of a NIS consistency test.</summary>
public enum ConsistencyVerdict
{
    /// <summary>Too few samples to say.</summary>
    Insufficient,

    /// <summary>Mean NIS inside its two-sided 95 % chi-square interval.</summary>
    Consistent,

    /// <summary>Mean NIS above the interval: the filter claims more certainty than the data bear out (or the sensor misbehaves).</summary>
    TooOptimistic,

    /// <summary>Mean NIS below the interval: the filter is more uncertain than it needs to be (noise settings too large).</summary>
    TooPessimistic,
}
