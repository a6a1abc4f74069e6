namespace FusionService.Estimation.Measurements;

/// <summary>What a reported horizontal accuracy number means (see <see cref="HorizontalAccuracy"/>).</summary>
public enum AccuracyConvention
{
    /// <summary>Standard deviation of each horizontal axis (east and north), metres.</summary>
    OneSigmaPerAxis,

    /// <summary>Circular error probable: radius containing 50 % of fixes.</summary>
    Cep50,

    /// <summary>Radius containing 68 % of fixes (what many phone platforms report).</summary>
    Radius68,

    /// <summary>Radius containing 95 % of fixes (R95).</summary>
    Radius95,

    /// <summary>Distance root mean square, sqrt(σe² + σn²) (what HDOP x UERE estimates).</summary>
    Drms,
}
