namespace FusionService.Estimation.Measurements;

/// <summary>Converts reported horizontal accuracies to the filter's 1-sigma per-axis value.</summary>
/// <remarks>
/// The horizontal error is modelled as a circular Gaussian with per-axis standard deviation σ, so its radius is
/// Rayleigh distributed: P(r ≤ R) = 1 - exp(-R² / (2σ²)), hence R_p = σ sqrt(-2 ln(1 - p)) (derived):
/// CEP50 = 1.17741 σ, R68 = 1.50959 σ, R95 = 2.44775 σ; DRMS = sqrt(2) σ.
/// </remarks>
public static class HorizontalAccuracy
{
    /// <summary>Per-axis 1-sigma accuracy, metres, of a reported accuracy value in the given convention.</summary>
    /// <param name="valueM">Reported accuracy, metres, finite and positive.</param>
    /// <param name="convention">What the value means.</param>
    public static double ToSigmaPerAxisM(double valueM, AccuracyConvention convention)
    {
        if (!double.IsFinite(valueM) || valueM <= 0)
        {
            throw new ArgumentOutOfRangeException(nameof(valueM), valueM, "accuracy must be finite and positive");
        }

        return convention switch
        {
            AccuracyConvention.OneSigmaPerAxis => valueM,
            AccuracyConvention.Cep50 => valueM / RadiusFactor(0.50),
            AccuracyConvention.Radius68 => valueM / RadiusFactor(0.68),
            AccuracyConvention.Radius95 => valueM / RadiusFactor(0.95),
            AccuracyConvention.Drms => valueM / Math.Sqrt(2.0),
            _ => throw new ArgumentOutOfRangeException(nameof(convention), convention, "unknown accuracy convention"),
        };
    }

    /// <summary>Per-axis 1-sigma accuracy, metres, from HDOP and a user equivalent range error (UERE, 1 sigma, metres).</summary>
    /// <remarks>HDOP x UERE is the horizontal DRMS (Misra and Enge, Global Positioning System, 2nd ed., ch. 6; from memory).</remarks>
    public static double FromHdop(double hdop, double uereM)
    {
        if (!double.IsFinite(hdop) || hdop <= 0)
        {
            throw new ArgumentOutOfRangeException(nameof(hdop), hdop, "HDOP must be finite and positive");
        }

        return ToSigmaPerAxisM(hdop * uereM, AccuracyConvention.Drms);
    }

    /// <summary>Radius containing probability <paramref name="p"/> of a unit circular Gaussian: sqrt(-2 ln(1 - p)).</summary>
    public static double RadiusFactor(double p) => Math.Sqrt(-2.0 * Math.Log(1.0 - p));
}
