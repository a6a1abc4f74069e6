// A new verdict of the filter on a stored measurement.
using FusionService.Estimation.Tracking;
namespace FusionService.Storage.Measurements;

/// <summary>The filter's (new) verdict on a stored measurement, for <see cref="MeasurementVerdictWriter"/>.</summary>
/// <param name="Key">The stored measurement.</param>
/// <param name="Outcome">What the filter did with it.</param>
/// <param name="Nis">Normalised innovation squared (dimensionless, non-negative), or null when no update was attempted.</param>
/// <param name="TrackReset">True when the measurement restarted the track.</param>
public readonly record struct MeasurementOutcomeUpdate(MeasurementKey Key, OutcomeKind Outcome, double? Nis, bool TrackReset)
{
    /// <summary>
    /// First component of the whitened innovation w = L⁻¹ ν (S = L Lᵀ; dimensionless, standard normal for a consistent
    /// filter; GNSS position: east), stored as <c>real</c> in <c>measurement_chunks.w0</c> (migrations 0006, 0013); null when
    /// no innovation was formed.
    /// </summary>
    public float? Whitened0 { get; init; }

    /// <summary>Second component of the whitened innovation for 2-D measurements (GNSS position: north), <c>measurement_chunks.w1</c>; null otherwise.</summary>
    public float? Whitened1 { get; init; }
}
