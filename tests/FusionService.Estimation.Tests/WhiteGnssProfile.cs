using FusionService.Estimation.Models;

namespace FusionService.Estimation.Tests;

/// <summary>
/// The filter's noise model for scenarios whose GNSS position error is white (the scenario generator's default: an
/// independent draw per fix). The filter's own default takes most of the error as correlated over a minute, which is
/// right for real receivers and wrong for such data; a test that checks the algebra on white data states the white
/// model instead (the smallest correlated share the profile allows in practice, 1 %), without fitting it per receiver.
/// </summary>
internal static class WhiteGnssProfile
{
    /// <summary>Correlated share used for white GNSS data.</summary>
    public const double CorrelatedFraction = 0.01;

    /// <summary><paramref name="profile"/> with the GNSS error taken as (almost) white.</summary>
    public static NoiseProfile Of(NoiseProfile profile) => profile with { GnssCorrelatedFraction = CorrelatedFraction, GnssErrorIdentification = false };

    /// <summary>The delivery van with white GNSS error.</summary>
    public static NoiseProfile DeliveryVan { get; } = Of(NoiseProfile.DeliveryVan);
}
