// The primary-key fields that identify one stored measurement.
namespace FusionService.Storage.Measurements;

/// <summary>Identifies one row of <c>measurements</c> (its primary key without the derived <c>measured_at</c>).</summary>
/// <param name="FleetId">Owning fleet.</param>
/// <param name="VehicleId">Vehicle within the fleet.</param>
/// <param name="Kind">Sensor kind code.</param>
/// <param name="TimeUs">Measurement time, Unix microseconds (UTC).</param>
/// <param name="MessageKey">Message key.</param>
public readonly record struct MeasurementKey(Guid FleetId, string VehicleId, short Kind, long TimeUs, long MessageKey)
{
    /// <summary>The key of <paramref name="row"/>.</summary>
    public static MeasurementKey Of(in MeasurementRow row) => new(row.FleetId, row.VehicleId, row.Kind, row.TimeUs, row.MessageKey);
}
