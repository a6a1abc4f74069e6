namespace FusionService.Simulator.Tests.Fleet;

/// <summary>Test classes that share the default demo fleet.</summary>
[CollectionDefinition(Name)]
public sealed class FleetCollection : ICollectionFixture<FleetFixture>
{
    public const string Name = "default demo fleet";
}
