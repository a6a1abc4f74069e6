// The xunit collection sharing one PostgreSQL server and one service host.
namespace FusionService.Tests.Infrastructure;

/// <summary>Every service test class runs in this collection: one after another, on one server.</summary>
[CollectionDefinition(Name)]
public sealed class ServiceTests : ICollectionFixture<ServiceFixture>
{
    /// <summary>The collection's name.</summary>
    public const string Name = "service";
}
