// The xunit collection sharing one service and one browser.
namespace FusionService.Browser.Tests.Infrastructure;

/// <summary>Every browser test class runs in this collection: one after another, on one service and one browser.</summary>
[CollectionDefinition(Name)]
public sealed class BrowserTests : ICollectionFixture<DashboardFixture>
{
    /// <summary>The collection's name.</summary>
    public const string Name = "browser";
}
