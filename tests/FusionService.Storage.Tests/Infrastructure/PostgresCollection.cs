// The xunit collection that shares one PostgreSQL server.
namespace FusionService.Storage.Tests.Infrastructure;

/// <summary>Test classes marked <c>[Collection(PostgresCollection.Name)]</c> share one <see cref="PostgresFixture"/>,
/// started before the first of them and stopped after the last.</summary>
[CollectionDefinition(Name)]
public sealed class PostgresCollection : ICollectionFixture<PostgresFixture>
{
    /// <summary>The collection's name.</summary>
    public const string Name = "postgres";
}
