// The demo fleet's deliberate faults raise the matching alerts (estimation core + evaluator, no I/O).
using FusionService.Alerts;
using FusionService.Simulator.Fleet;

namespace FusionService.Tests.Alerts;

public sealed class DemoFleetAlertTests
{
    private static readonly Lazy<DemoFleet> Fleet = new(() => new DemoFleet(new DemoFleetOptions { VanCount = DemoFleet.TowVanIndex + 1 }));

    [Fact]
    public void Van_with_jumping_gnss_raises_gated_burst()
    {
        var van = Fleet.Value.Vans[DemoFleet.JumpingGnssVanIndex];
        Assert.Equal(DemoFaultKind.GnssJumps, van.Fault);
        var observations = EvaluatorRun.Run(van.Measurements);
        Assert.Contains(observations, o => o.Kind == AlertKinds.GatedBurst && !o.Resolve && o.Count >= 3);
        Assert.DoesNotContain(observations, o => o.Kind is AlertKinds.TrackReset or AlertKinds.WheelScaleOutOfBand);
    }

    [Fact]
    public void Towed_van_raises_track_reset()
    {
        var van = Fleet.Value.Vans[DemoFleet.TowVanIndex];
        Assert.Equal(DemoFaultKind.TowedAway, van.Fault);
        var observations = EvaluatorRun.Run(van.Measurements);
        var reset = observations.First(o => o.Kind == AlertKinds.TrackReset && !o.Resolve);
        Assert.NotNull(van.TowSpan);
        long startUs = reset.StartedAt.ToUnixTimeMilliseconds() * 1000;
        Assert.InRange(startUs, van.TowSpan.Value.StartTimeUs, van.TowSpan.Value.EndTimeUs + 120_000_000);
    }

    [Fact]
    public void Van_with_a_three_percent_wheel_error_at_the_band_edge_does_not_alert()
    {
        // The wheel-size van reads 1.03 x: exactly the band's upper edge, so with the 1.96-sd margin it must not alert.
        var van = Fleet.Value.Vans[DemoFleet.WheelSizeVanIndex];
        var observations = EvaluatorRun.Run(van.Measurements);
        Assert.DoesNotContain(observations, o => o.Kind == AlertKinds.WheelScaleOutOfBand);
    }
}
