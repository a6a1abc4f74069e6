// One stored sensor message and the filter's verdict on it.
using FusionService.Estimation.Tracking;
namespace FusionService.Storage.Measurements;

/// <summary>One row of <c>measurements</c>: a sensor message of one vehicle and what the filter did with it.</summary>
/// <param name="FleetId">Owning fleet.</param>
/// <param name="VehicleId">Vehicle identifier within the fleet (1-128 characters).</param>
/// <param name="Kind">Sensor kind code assigned by the ingest layer (non-negative).</param>
/// <param name="TimeUs">Measurement time, Unix microseconds (UTC). Also decides the daily partition.</param>
/// <param name="MessageKey">Tells apart different messages of one vehicle, kind and instant.</param>
/// <param name="ReceivedAtUtc">When the service received the message; Kind must be Utc; stored to the
/// microsecond (sub-microsecond ticks are truncated).</param>
/// <param name="V0">First value, in the units the kind defines.</param>
/// <param name="V1">Second value, or null when the kind has one value.</param>
/// <param name="V2">Third value, or null when the kind has fewer than three values.</param>
/// <param name="Flags">Kind-specific bit flags (0 when none).</param>
/// <param name="Outcome">What the filter did with the measurement.</param>
/// <param name="Nis">Normalised innovation squared (dimensionless, non-negative), or null when no update
/// was attempted.</param>
/// <param name="TrackReset">True when this measurement restarted the vehicle's track.</param>
public readonly record struct MeasurementRow(
    Guid FleetId,
    string VehicleId,
    short Kind,
    long TimeUs,
    long MessageKey,
    DateTime ReceivedAtUtc,
    double V0,
    double? V1,
    double? V2,
    int Flags,
    OutcomeKind Outcome,
    double? Nis,
    bool TrackReset);
