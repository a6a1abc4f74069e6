// Settings read at start: the scrape token is validated, Kestrel's body limit comes from Ingest:MaxBodyBytes.
using FusionService.Tests.Infrastructure;
using Microsoft.AspNetCore.Server.Kestrel.Core;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Options;

namespace FusionService.Tests.Operations;

[Collection(ServiceTests.Name)]
public sealed class StartupSettingsTests(ServiceFixture fixture)
{
    [Theory]
    [InlineData("short")]
    [InlineData("scrape secret with spaces")]
    [InlineData("scrape-secret-\u00e9")]
    public async Task Issue17_a_bad_scrape_token_stops_the_start_naming_its_key(string token)
    {
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Operations:MetricsToken"] = token });
        var error = Assert.ThrowsAny<Exception>(() => host.CreateClient());
        var validation = error as OptionsValidationException ?? error.InnerException as OptionsValidationException
            ?? (error as AggregateException)?.InnerExceptions.OfType<OptionsValidationException>().FirstOrDefault();
        Assert.NotNull(validation);
        Assert.Contains("Operations:MetricsToken", validation.Message, StringComparison.Ordinal);
    }

    [Fact]
    public async Task Issue17_kestrel_body_limit_follows_Ingest_MaxBodyBytes()
    {
        // One byte above the ingest limit, so that the endpoint itself answers 413 naming the limit.
        await using var host = new ServiceFactory(fixture.ConnectionString, new Dictionary<string, string?> { ["Ingest:MaxBodyBytes"] = "100000" });
        using var client = host.CreateClient();
        Assert.Equal(100_001, host.Services.GetRequiredService<IOptions<KestrelServerOptions>>().Value.Limits.MaxRequestBodySize);
    }
}
