// The xunit collection sharing one PostgreSQL server and one service host.
namespace FusionService.Tests.Infrastructure;

/// <summary>
/// Every service test class runs in this collection: one after another, on one server, and not beside the test classes
/// outside it, so that process-wide figures (allocated bytes, live heap) measured by a service test are its own.
/// </summary>
[CollectionDefinition(Name, DisableParallelization = true)]
public sealed class ServiceTests : ICollectionFixture<ServiceFixture>
{
    /// <summary>The collection's name.</summary>
    public const string Name = "service";
}
