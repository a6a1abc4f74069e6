// One upload of a tracker: the messages it carries and when it reaches the server.
namespace FusionService.Simulator.Messages;

/// <summary>One upload of a simulated tracker (see <see cref="TelemetryMessages.ToBatches"/>).</summary>
/// <param name="VehicleId">The van that uploads.</param>
/// <param name="ArrivalTimeUs">When the upload reaches the server in scenario time, Unix microseconds.</param>
/// <param name="BatchIndex">The tracker's batch number (a retry copy carries the number of the original).</param>
/// <param name="IsRetryCopy">True for the second sending of a batch whose acknowledgement was lost: same messages, same ids.</param>
/// <param name="Messages">The messages, in the tracker's (canonical) order.</param>
public sealed record TelemetryBatch(string VehicleId, long ArrivalTimeUs, int BatchIndex, bool IsRetryCopy, IReadOnlyList<TelemetryMessage> Messages);
