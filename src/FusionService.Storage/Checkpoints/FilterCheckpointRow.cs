// One stored filter checkpoint.
namespace FusionService.Storage.Checkpoints;

/// <summary>One row of <c>filter_checkpoints</c>: the serialised filter of one vehicle at one instant.</summary>
/// <param name="FleetId">Owning fleet.</param>
/// <param name="VehicleId">Vehicle identifier within the fleet.</param>
/// <param name="TimeUs">Instant the checkpoint represents, Unix microseconds (UTC): every measurement up to and
/// including this instant has been processed.</param>
/// <param name="AnchorLatDeg">WGS-84 latitude of the local frame's origin the payload refers to, degrees.</param>
/// <param name="AnchorLonDeg">WGS-84 longitude of that origin, degrees.</param>
/// <param name="PayloadVersion">Format version of <paramref name="Payload"/>, chosen by its writer.</param>
/// <param name="Payload">The estimation core's serialisation of the filter; opaque to storage.</param>
/// <remarks>Record equality compares <see cref="Payload"/> by reference; compare its bytes to compare contents.</remarks>
public readonly record struct FilterCheckpointRow(
    Guid FleetId,
    string VehicleId,
    long TimeUs,
    double AnchorLatDeg,
    double AnchorLonDeg,
    short PayloadVersion,
    ReadOnlyMemory<byte> Payload);
