// The kinds of deliberate fault in the demo fleet.
namespace FusionService.Simulator.Fleet;

/// <summary>A deliberate fault of the demo fleet (see <see cref="DemoFleet.Faults"/>).</summary>
public enum DemoFaultKind
{
    /// <summary>No van-specific fault (the van still meets the town's canyon blocks and underpass).</summary>
    None = 0,

    /// <summary>Town-wide: blocks where GNSS fixes are biased, wider and heavy-tailed (Student-t).</summary>
    UrbanCanyon = 1,

    /// <summary>Town-wide: an underpass in which there is no GNSS at all.</summary>
    Underpass = 2,

    /// <summary>One van: wheel-speed scale error of 3 % (the others 0.5-1 %).</summary>
    WheelSizeError = 3,

    /// <summary>One van: large gyro yaw-rate bias (3 deg/s; the others within ±0.5 deg/s).</summary>
    GyroBias = 4,

    /// <summary>One van: GNSS fixes jump 30-100 m now and then (4 % of fixes).</summary>
    GnssJumps = 5,

    /// <summary>One van: lifted onto a tow truck and moved 2.5 km; GNSS follows, the wheel reads 0 and the IMU is quiet.</summary>
    TowedAway = 6,
}
