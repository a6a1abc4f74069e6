namespace FusionService.Estimation.Diagnostics;

/// <summary>Verdict of a whiteness test of normalised innovations (<see cref="InnovationWhitenessTest"/>).</summary>
public enum WhitenessVerdict
{
    /// <summary>Too few samples (or a series without variance) to say.</summary>
    TooFewSamples,

    /// <summary>The Ljung-Box statistic is at or below its chi-square critical value: no evidence of correlation.</summary>
    White,

    /// <summary>
    /// The Ljung-Box statistic exceeds its critical value: successive innovations are correlated, so the filter's errors
    /// persist from one measurement to the next and its stated uncertainty cannot be trusted.
    /// </summary>
    Correlated,
}
