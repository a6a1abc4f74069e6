using FusionService.Estimation.Time;
namespace FusionService.Storage.Time;

/// <summary>
/// Query parameters of one vehicle's half-open time range. The <c>measured_at</c> bounds repeat the <c>time_us</c>
/// bounds so that the planner can skip daily partitions outside the range.
/// </summary>
internal sealed record TimeRangeParameters(Guid FleetId, string VehicleId, long FromUs, long ToUs, DateTimeOffset FromAt, DateTimeOffset ToAt)
{
    /// <summary>Parameters for [<paramref name="fromUs"/>, <paramref name="toUs"/>) of one vehicle.</summary>
    public static TimeRangeParameters For(Guid fleetId, string vehicleId, long fromUs, long toUs) => new(
        fleetId,
        vehicleId,
        fromUs,
        toUs,
        UnixMicroseconds.ToDateTimeOffset(fromUs),
        UnixMicroseconds.ToDateTimeOffset(toUs));
}
