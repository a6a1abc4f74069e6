// The one translation between the core's Measurement and the stored rows' V0/V1/V2 columns.
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;
using FusionService.Storage.Audit;
using FusionService.Storage.History;

namespace FusionService.Storage.Measurements;

/// <summary>
/// Translates between a core <see cref="Measurement"/> and the columns of <c>measurements</c>: kind code, message key
/// and the three values <c>v0</c>, <c>v1</c>, <c>v2</c> (a NaN second value and an absent third value are SQL NULL).
/// </summary>
public static class MeasurementRows
{
    /// <summary>The stored row of <paramref name="m"/>, not yet judged (<see cref="OutcomeKind.Pending"/>).</summary>
    /// <param name="fleetId">Owning fleet.</param>
    /// <param name="vehicleId">Vehicle within the fleet.</param>
    /// <param name="m">The measurement.</param>
    /// <param name="receivedUtc">When the service received it (Kind=Utc).</param>
    public static MeasurementRow ToRow(Guid fleetId, string vehicleId, in Measurement m, DateTime receivedUtc) => new(
        fleetId,
        vehicleId,
        (short)m.Kind,
        m.TimeUs,
        (long)m.MessageKey,
        receivedUtc,
        m.Value0,
        double.IsNaN(m.Value1) ? null : m.Value1,
        m.Value2,
        0,
        OutcomeKind.Pending,
        null,
        false);

    /// <summary>The measurement a stored row holds (bitwise equal to the one it was stored from).</summary>
    /// <param name="row">The stored row.</param>
    public static Measurement ToMeasurement(in MeasurementRow row) => FromColumns(row.TimeUs, row.Kind, row.MessageKey, row.V0, row.V1, row.V2);

    /// <summary>The measurement a stored row holds (bitwise equal to the one it was stored from).</summary>
    /// <param name="s">The stored row's values.</param>
    public static Measurement ToMeasurement(in StoredMeasurementValues s) => FromColumns(s.TimeUs, s.Kind, s.MessageKey, s.V0, s.V1, s.V2);

    /// <summary>The measurement a stored row holds (bitwise equal to the one it was stored from).</summary>
    /// <param name="s">The stored row's values as a replay reads them.</param>
    public static Measurement ToMeasurement(in ReplayMeasurementValues s) => FromColumns(s.TimeUs, s.Kind, s.MessageKey, s.V0, s.V1, s.V2);

    /// <summary>
    /// The kind, time and first two values of a judged measurement as a <see cref="Measurement"/> (its message key
    /// and third value are not part of the sample: 0).
    /// </summary>
    /// <param name="s">The sample; its kind code must be a defined sensor kind.</param>
    public static Measurement ToMeasurement(in VerdictSample s) =>
        Measurement.FromStored(s.TimeUs, OrderKeyOf(s.Kind, 0), s.V0, s.V1 ?? double.NaN, 0f);

    private static Measurement FromColumns(long timeUs, short kind, long messageKey, double v0, double? v1, double? v2) =>
        Measurement.FromStored(timeUs, OrderKeyOf(kind, messageKey), v0, v1 ?? double.NaN, (float)(v2 ?? 0));

    private static ulong OrderKeyOf(short kind, long messageKey) => Measurement.OrderKeyOf((SensorKind)(byte)kind, (ulong)messageKey);
}
