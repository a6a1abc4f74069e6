using FusionService.Simulator.Fleet;

namespace FusionService.Simulator.Tests.Fleet;

/// <summary>The default demo fleet (12 vans), built once for the tests that only read it.</summary>
public sealed class FleetFixture
{
    public DemoFleet Fleet { get; } = new DemoFleet();
}
