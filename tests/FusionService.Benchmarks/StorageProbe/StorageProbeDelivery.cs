// One upload of the storage probe's van-day and what it makes the service write.
namespace FusionService.Benchmarks.StorageProbe;

/// <summary>One upload in arrival order.</summary>
/// <param name="From">First index of the batch in the day's measurements.</param>
/// <param name="To">End (exclusive) of the batch.</param>
/// <param name="ArrivalUs">When it reaches the service (its receive time), Unix microseconds.</param>
/// <param name="Fresh">Indices of the batch's measurements not stored before (ascending).</param>
/// <param name="Judged">Indices that get a verdict written after it (its fresh ones, or the whole replayed stretch).</param>
/// <param name="StatesFrom">First fused state written after it.</param>
/// <param name="StatesTo">End (exclusive) of the fused states written after it.</param>
internal sealed record StorageProbeDelivery(int From, int To, long ArrivalUs, int[] Fresh, int[] Judged, int StatesFrom, int StatesTo);
