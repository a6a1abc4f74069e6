// One validated telemetry message as core measurements.
using FusionService.Estimation.Measurements;

namespace FusionService.Ingest;

/// <summary>A valid message: its vehicle and the one or two core measurements it becomes (a GNSS message with
/// speed becomes a position and a velocity with the same key).</summary>
/// <param name="VehicleId">Vehicle id within the caller's fleet.</param>
/// <param name="Measurements">Measurements, the first one deciding whether the message is a duplicate.</param>
public sealed record ParsedMessage(string VehicleId, Measurement[] Measurements)
{
    /// <summary>Optional fields left out because they were invalid, in the order they were judged; empty when every
    /// field given was used.</summary>
    public IReadOnlyList<DroppedField> DroppedFields { get; init; } = [];
}
