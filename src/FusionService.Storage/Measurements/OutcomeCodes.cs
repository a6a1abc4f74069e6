// The one translation between the core's OutcomeKind and the stored outcome codes.
using FusionService.Estimation.Tracking;

namespace FusionService.Storage.Measurements;

/// <summary>
/// Stored codes (<c>smallint</c> elements of <c>measurement_chunks.outcome</c>) of the core's
/// <see cref="OutcomeKind"/>: 0 accepted, 1 gated, 2 too late, 3 duplicate, 4 pending, 5 initialising, 6 before start
/// (migration 0002), 7 unused (0002), 8 unusable (0010). The codes are part of the schema and equal the enum's values,
/// so row types read by Dapper carry <see cref="OutcomeKind"/> directly; writers and readers by hand go through here.
/// </summary>
public static class OutcomeCodes
{
    private const short LastCode = (short)OutcomeKind.Unusable;

    /// <summary>The stored code of <paramref name="outcome"/>.</summary>
    /// <param name="outcome">An outcome the store keeps: not <see cref="OutcomeKind.Conflict"/> or <see cref="OutcomeKind.TrackReset"/>.</param>
    /// <exception cref="ArgumentOutOfRangeException">The outcome has no stored code.</exception>
    public static short ToCode(OutcomeKind outcome) => (short)outcome <= LastCode
        ? (short)outcome
        : throw new ArgumentOutOfRangeException(nameof(outcome), outcome, "has no stored code (store conflicts as unused, track resets as accepted with the reset flag)");

    /// <summary>The outcome of a stored code.</summary>
    /// <param name="code">A stored code, 0-8.</param>
    /// <exception cref="ArgumentOutOfRangeException">Not a stored code.</exception>
    public static OutcomeKind FromCode(short code) => code is >= 0 and <= LastCode
        ? (OutcomeKind)code
        : throw new ArgumentOutOfRangeException(nameof(code), code, "is not a stored outcome code (0-8)");
}
