// A core measurement in a form Orleans can serialise.
using FusionService.Estimation.Measurements;

namespace FusionService.Tracking;

/// <summary>The stored fields of a <see cref="Measurement"/>, as a grain-call argument.</summary>
/// <param name="TimeUs">Time, Unix microseconds.</param>
/// <param name="OrderKey">Sensor kind (top 8 bits) and message key (low 56 bits).</param>
/// <param name="V0">First value (see <see cref="Measurement.Value0"/>).</param>
/// <param name="V1">Second value (see <see cref="Measurement.Value1"/>).</param>
/// <param name="V2">Third value (see <see cref="Measurement.Value2"/>).</param>
[GenerateSerializer]
[Immutable]
[Alias("FusionService.Tracking.TrackMeasurement")]
public readonly record struct TrackMeasurement(
    [property: Id(0)] long TimeUs,
    [property: Id(1)] ulong OrderKey,
    [property: Id(2)] double V0,
    [property: Id(3)] double V1,
    [property: Id(4)] float V2)
{
    /// <summary>The fields of <paramref name="m"/>.</summary>
    public static TrackMeasurement From(in Measurement m) => new(m.TimeUs, m.OrderKey, m.Value0, m.Value1, m.Value2);

    /// <summary>The measurement again (bitwise equal to the one it was made from).</summary>
    public Measurement ToMeasurement() => Measurement.FromStored(TimeUs, OrderKey, V0, V1, V2);
}
