// Which posteriors become fused-state rows (definition: TrackGrainOptions.FusedStateIntervalS).
using FusionService.Estimation.Measurements;
using FusionService.Tracking;

namespace FusionService.Tests.Tracking;

/// <summary>
/// Expected behaviour from <see cref="TrackGrainOptions.FusedStateIntervalS"/> and the grain's documentation: every GNSS
/// position epoch, otherwise at least one state per interval of data time, and any older state (re-processing after
/// late data). Times are invented.
/// </summary>
public sealed class FusedStateSamplerTests
{
    private const long T0 = 1_780_000_000_000_000;

    [Fact]
    public void Takes_the_first_state_then_one_per_interval_between_fixes()
    {
        var sampler = new FusedStateSampler(intervalUs: 1_000_000);
        Assert.True(sampler.Take(SensorKind.WheelSpeed, T0));
        Assert.False(sampler.Take(SensorKind.WheelSpeed, T0 + 100_000));
        Assert.False(sampler.Take(SensorKind.Imu, T0 + 999_999));
        Assert.True(sampler.Take(SensorKind.Imu, T0 + 1_000_000));
        Assert.False(sampler.Take(SensorKind.GnssVelocity, T0 + 1_500_000));
    }

    [Fact]
    public void Takes_every_gnss_position_epoch_and_every_older_state()
    {
        var sampler = new FusedStateSampler(intervalUs: 1_000_000);
        Assert.True(sampler.Take(SensorKind.GnssPosition, T0));
        Assert.True(sampler.Take(SensorKind.GnssPosition, T0 + 100_000));
        Assert.True(sampler.Take(SensorKind.WheelSpeed, T0 + 50_000));
        // The older state became the reference: the interval counts from it again.
        Assert.False(sampler.Take(SensorKind.WheelSpeed, T0 + 1_049_999));
        Assert.True(sampler.Take(SensorKind.WheelSpeed, T0 + 1_050_000));
    }
}
