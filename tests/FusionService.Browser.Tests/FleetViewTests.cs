// Sign-in and the fleet view in a real browser: every van drawn with its 95 % ellipse, to the scale bar's scale.
using System.Text.Json;
using FusionService.Browser.Tests.Infrastructure;
using OpenQA.Selenium;

namespace FusionService.Browser.Tests;

[Collection(BrowserTests.Name)]
public sealed class FleetViewTests(DashboardFixture fixture)
{
    [Fact]
    public void A_wrong_key_is_refused_and_not_kept()
    {
        var page = new DashboardPage(fixture);
        page.OpenSignedOut();
        page.SubmitKey("fsk_this-key-does-not-exist");
        DashboardPage.WaitFor(
            () => page.Driver.FindElement(By.Id("sign-in-message")).Text.Contains("not accepted", StringComparison.Ordinal),
            TimeSpan.FromSeconds(20), "the refusal message");
        Assert.Null(page.Script("return sessionStorage.getItem('fusionservice.readKey');"));
        Assert.False(page.Visible("#fleet-view"));
    }

    [Fact]
    public void The_page_carries_the_cautions_before_and_after_sign_in()
    {
        var page = new DashboardPage(fixture);
        page.OpenSignedOut();
        AssertCautions(page);
        page.SignIn();
        AssertCautions(page);
    }

    [Fact]
    public void Signed_in_fleet_view_draws_every_van_with_its_95_percent_ellipse_to_the_scale_bar()
    {
        var page = new DashboardPage(fixture);
        page.SignIn();
        DashboardPage.WaitFor(
            () => page.Driver.FindElements(By.CssSelector("#fleet-map g.van")).Count >= 3,
            TimeSpan.FromSeconds(120), "three vans on the fleet map");

        // One script run reads everything at once, so a redraw by the next poll cannot fall between two reads.
        string json = (string)page.Script("""
            const vans = [...document.querySelectorAll('#fleet-map g.van')].map((g) => {
              const e = g.querySelector('ellipse.van-ellipse');
              return { vehicle: g.dataset.vehicle, rx: Number(e.getAttribute('rx')), ry: Number(e.getAttribute('ry')),
                       semiMajorM: Number(e.dataset.semiMajorM), transform: e.getAttribute('transform'),
                       floorShown: g.querySelector('circle.van-floor').dataset.shown === 'true',
                       floorDisplay: getComputedStyle(g.querySelector('circle.van-floor')).display,
                       floorR: Number(g.querySelector('circle.van-floor').getAttribute('r')) };
            });
            const bar = document.querySelector('#fleet-map .scale-bar').dataset.lengthPx;
            const lengthM = Number(document.querySelector('#fleet-map .scale-bar-label').dataset.lengthM);
            const rows = document.querySelectorAll('#van-table tbody tr').length;
            return JSON.stringify({ vans, bar, lengthM, rows });
            """)!;
        using var drawn = JsonDocument.Parse(json);
        var root = drawn.RootElement;
        var vans = root.GetProperty("vans").EnumerateArray().ToList();
        Assert.Equal(vans.Count, root.GetProperty("rows").GetInt32());

        // The scale bar's length in pixels over its length in metres: the map's pixels per metre.
        string bar = root.GetProperty("bar").GetString()!;
        double barPx = DashboardPage.Number(bar);
        double lengthM = root.GetProperty("lengthM").GetDouble();
        Assert.True(lengthM > 0 && barPx > 0, "scale bar: " + bar);
        double pxPerM = barPx / lengthM;

        foreach (var van in vans)
        {
            string name = van.GetProperty("vehicle").GetString()!;
            Assert.StartsWith("van-", name, StringComparison.Ordinal);
            double semiMajorM = van.GetProperty("semiMajorM").GetDouble();
            double rx = van.GetProperty("rx").GetDouble();
            double ry = van.GetProperty("ry").GetDouble();
            Assert.True(semiMajorM > 0, name + ": 95 % ellipse semi-major axis must be positive");
            Assert.True(ry > 0 && ry <= rx, $"{name}: ellipse radii {rx} and {ry} px");
            Assert.StartsWith("rotate(", van.GetProperty("transform").GetString(), StringComparison.Ordinal);
            // The ellipse is drawn to the same scale as the scale bar (1e-6 px per metre: float rounding only).
            AssertNear.Equal(pxPerM, rx / semiMajorM, 1e-6, name + ": ellipse pixels per metre");

            // Issue 15: an ellipse smaller than the floor ring (6 px) is marked by the ring, and only then.
            double floorR = van.GetProperty("floorR").GetDouble();
            Assert.Equal(rx < floorR, van.GetProperty("floorShown").GetBoolean());
            Assert.Equal(rx < floorR ? "inline" : "none", van.GetProperty("floorDisplay").GetString());
        }

        bool forDocs = string.Equals(Environment.GetEnvironmentVariable("FUSION_DOCS_SCREENSHOT"), "fleet", StringComparison.Ordinal);
        if (forDocs)
        {
            // For the README's picture, wait until all 8 demo vans have a position.
            DashboardPage.WaitFor(
                () => page.Driver.FindElements(By.CssSelector("#fleet-map g.van")).Count == 8,
                TimeSpan.FromSeconds(120), "all 8 demo vans on the fleet map");
            // The vans start together at the depot: let them go out on their rounds (65 min of the demo's day), long
            // enough for the base layer's once-a-minute refresh to hold the streets they drove.
            Thread.Sleep(TimeSpan.FromSeconds(65));
        }

        string shot = forDocs ? page.DocsScreenshot("fleet-view", 1250) : page.Screenshot("fleet-view");
        Assert.True(new FileInfo(shot).Length > 10_000, "screenshot " + shot + " is suspiciously small");
        if (forDocs)
        {
            File.Copy(shot, Path.Combine(RepositoryFiles.Root(), "docs", "dashboard.png"), overwrite: true);
        }
    }

    private static void AssertCautions(DashboardPage page)
    {
        string text = page.Driver.FindElement(By.Id("caution")).Text;
        Assert.True(page.Visible("#caution"), "the cautions must be visible");
        Assert.Contains("estimates", text, StringComparison.Ordinal);
        Assert.Contains("not for safety-critical navigation or collision avoidance", text, StringComparison.Ordinal);
        Assert.Contains("personal data", text, StringComparison.Ordinal);
        Assert.Contains("follow local law on consent, access and retention", text, StringComparison.Ordinal);
    }
}
