// One instant of a vehicle's true motion.
namespace FusionService.Scenarios;

/// <summary>
/// The true planar motion of a vehicle at one instant, in the scenario's local east/north frame
/// (the same state meaning as the filter's first six components, see <c>StateIndex</c>).
/// </summary>
/// <param name="TimeUs">Time, microseconds since the Unix epoch (UTC).</param>
/// <param name="EastM">East coordinate from the scenario origin, metres.</param>
/// <param name="NorthM">North coordinate from the scenario origin, metres.</param>
/// <param name="HeadingRad">Heading, radians from east, counter-clockwise, in (-π, π].</param>
/// <param name="SpeedMps">Speed along the heading, metres per second (exactly 0 while stopped).</param>
/// <param name="YawRateRps">Yaw rate, radians per second, positive counter-clockwise (left turn).</param>
/// <param name="AccelMps2">Longitudinal acceleration, metres per second squared.</param>
public readonly record struct TruthSample(
    long TimeUs, double EastM, double NorthM, double HeadingRad, double SpeedMps, double YawRateRps, double AccelMps2);
