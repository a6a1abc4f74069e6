// The service serves the dashboard's static files without a key, keeps the API keyed, and serves the pinned libraries.
using System.Net;
using System.Text.Json;
using FusionService.Browser.Tests.Infrastructure;

namespace FusionService.Browser.Tests;

[Collection(BrowserTests.Name)]
public sealed class DashboardServingTests(DashboardFixture fixture)
{
    [Fact]
    public async Task Root_serves_the_dashboard_without_a_key_while_the_api_still_needs_one()
    {
        using var client = new HttpClient { BaseAddress = fixture.BaseAddress };
        using var page = await client.GetAsync(new Uri("/", UriKind.Relative));
        Assert.Equal(HttpStatusCode.OK, page.StatusCode);
        Assert.Equal("text/html", page.Content.Headers.ContentType?.MediaType);
        string html = await page.Content.ReadAsStringAsync();
        Assert.Contains("<script type=\"module\" src=\"js/main.js\"></script>", html, StringComparison.Ordinal);

        using var module = await client.GetAsync(new Uri("/js/main.js", UriKind.Relative));
        Assert.Equal(HttpStatusCode.OK, module.StatusCode);
        Assert.Equal("text/javascript", module.Content.Headers.ContentType?.MediaType);

        using var api = await client.GetAsync(new Uri("/v1/vehicles", UriKind.Relative));
        Assert.Equal(HttpStatusCode.Unauthorized, api.StatusCode);
    }

    [Theory]
    [InlineData("d3", "/lib/d3/d3.min.js", "// https://d3js.org v{0} ")]
    [InlineData("uplot", "/lib/uplot/uPlot.esm.js", "uPlot (v{0})")]
    public async Task Served_libraries_are_the_versions_pinned_by_the_lock_file(string package, string path, string bannerFormat)
    {
        string lockPath = Path.Combine(RepositoryFiles.Root(), "src", "FusionService.Dashboard", "package-lock.json");
        using var lockFile = JsonDocument.Parse(await File.ReadAllTextAsync(lockPath));
        string pinned = lockFile.RootElement.GetProperty("packages").GetProperty("node_modules/" + package).GetProperty("version").GetString()!;

        using var client = new HttpClient { BaseAddress = fixture.BaseAddress };
        string served = await client.GetStringAsync(new Uri(path, UriKind.Relative));
        string banner = string.Format(System.Globalization.CultureInfo.InvariantCulture, bannerFormat, pinned);
        Assert.True(served.AsSpan(0, Math.Min(served.Length, 600)).Contains(banner.AsSpan(), StringComparison.Ordinal),
            $"{path} does not announce version {pinned} of {package} (package-lock.json) in its first 600 characters");

        string manifest = await client.GetStringAsync(new Uri(path[..(path.LastIndexOf('/') + 1)] + "package.json", UriKind.Relative));
        using var servedManifest = JsonDocument.Parse(manifest);
        Assert.Equal(pinned, servedManifest.RootElement.GetProperty("version").GetString());
    }
}
