// A fleet made for one test, with a key of each role.
namespace FusionService.Tests.Infrastructure;

/// <summary>A fleet with one key per role.</summary>
public sealed record TestFleet(Guid Id, string Name, string IngestKey, string ReadKey, string AdminKey);
