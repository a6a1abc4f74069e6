// Issue 15: freshness at a glance — a van fed live shows as moving with a small age, then silent once its feeder pauses,
// by the service's one silence limit (Alerts:SilentAfterS, 20 s in these tests), the same as the API's status.
using FusionService.Browser.Tests.Infrastructure;
using OpenQA.Selenium;

namespace FusionService.Browser.Tests;

[Collection(BrowserTests.Name)]
public sealed class FreshnessTests(DashboardFixture fixture)
{
    [Fact]
    public async Task Issue15_a_van_shows_moving_while_fed_then_silent_after_its_feeder_pauses()
    {
        var fleet = await fixture.CreateOwnFleetAsync("freshness");
        var (truth, measurements) = OwnFleet.Round(stops: 3, seed: 4300);
        // Feed from 10 s before the longest stretch the van drives faster than 3 m/s, its data time shifted to the wall clock.
        long driveUs = LongestDrive(truth, out long driveLengthUs);
        Assert.True(driveLengthUs >= 45_000_000, $"the round's longest drive lasts only {driveLengthUs / 1e6:0} s");
        var ordered = measurements.Where(m => m.TimeUs >= driveUs - 10_000_000).OrderBy(m => m.TimeUs).ToList();

        var page = new DashboardPage(fixture);
        page.SignIn(fleet.ReadKey);
        // The page names the service's silence limit, read from settings.json: 20 s here.
        const int LimitS = DemoServiceFactory.SilentAfterS;
        Assert.Equal("20 s", page.Driver.FindElement(By.Id("silent-limit-value")).Text);
        using (var settings = await fleet.GetAsync("/settings.json"))
        {
            Assert.Equal(LimitS, settings.RootElement.GetProperty("silent_after_s").GetDouble());
        }

        // The reader's choices: clock in UTC; imperial units.
        Choose(page, "pref-zone", "utc");
        Choose(page, "pref-units", "imperial");

        // Feed the van live: each second, the next second of its data, stamped with the wall clock.
        long startWallUs = DateTimeOffset.UtcNow.ToUnixTimeMilliseconds() * 1000;
        long firstUs = ordered[0].TimeUs;
        // The first 20 s at once, then second by second.
        long fedUntilUs = firstUs + 20_000_000;
        await fleet.PostAsync("live-van", OwnFleet.Shift(ordered.Where(m => m.TimeUs < fedUntilUs), startWallUs - 20_000_000 - firstUs));
        var deadline = DateTime.UtcNow + TimeSpan.FromSeconds(90);
        bool moving = false;
        while (!moving && DateTime.UtcNow < deadline)
        {
            long nowUs = DateTimeOffset.UtcNow.ToUnixTimeMilliseconds() * 1000;
            long untilUs = firstUs + 20_000_000 + (nowUs - startWallUs);
            var next = ordered.Where(m => m.TimeUs >= fedUntilUs && m.TimeUs < untilUs).ToList();
            fedUntilUs = untilUs;
            if (next.Count > 0)
            {
                await fleet.PostAsync("live-van", OwnFleet.Shift(next, startWallUs - 20_000_000 - firstUs));
            }

            moving = Row(page)?.GetDomAttribute("data-state") == "moving";
            await Task.Delay(1000);
        }

        if (!moving)
        {
            page.Screenshot("freshness-failed");
        }

        Assert.True(moving, "live-van never showed as moving while fed: " + Row(page)?.Text + " / " + page.Driver.FindElement(By.Id("fleet-status")).Text);
        var cells = Cells(page);
        int ageS = int.Parse(cells["ageS"], System.Globalization.CultureInfo.InvariantCulture);
        Assert.True(ageS <= LimitS, $"a van fed each second shows an estimate {ageS} s old");
        Assert.Equal("moving", cells["state"]);
        Assert.NotEqual("—", cells["heading"]);
        Assert.EndsWith("mph", cells["speed"], StringComparison.Ordinal);
        Assert.EndsWith("UTC", cells["clock"], StringComparison.Ordinal);
        // The age of each sensor, from the API's last_received_by_sensor: the van sends GNSS, wheel and IMU.
        string heard = cells["heard"];
        Assert.Contains("GNSS", heard, StringComparison.Ordinal);
        Assert.Contains("wheel", heard, StringComparison.Ordinal);
        Assert.Contains("IMU", heard, StringComparison.Ordinal);
        Assert.EndsWith("ft", cells["ellipse"], StringComparison.Ordinal);
        page.Screenshot("freshness-moving");

        // The feeder pauses: after 20 s without news the van is silent, its heading hidden, its age still counting.
        DashboardPage.WaitFor(() => Row(page)?.GetDomAttribute("data-state") == "silent", TimeSpan.FromSeconds(60), "live-van shown as silent");
        cells = Cells(page);
        Assert.Equal("silent", cells["state"]);
        Assert.Equal("—", cells["heading"]);
        Assert.Equal("none", page.Script("return getComputedStyle(document.querySelector(\"#fleet-map g.van[data-vehicle='live-van'] path.van-heading\")).display;"));
        // The page shows whole seconds: the first silent frame, just past the limit, may still read 20; the age keeps counting.
        DashboardPage.WaitFor(
            () => int.TryParse(Cells(page)["ageS"], System.Globalization.CultureInfo.InvariantCulture, out int ageNowS) && ageNowS > LimitS,
            TimeSpan.FromSeconds(5),
            "the age counting past the limit");
        cells = Cells(page);
        Assert.Equal("silent", cells["state"]);
        Assert.Contains("ago", cells["age"], StringComparison.Ordinal);
        Assert.Contains("1 silent", page.Driver.FindElement(By.Id("fleet-status")).Text, StringComparison.Ordinal);
        Assert.Equal("20", page.Driver.FindElement(By.Id("fleet-status")).GetDomAttribute("data-silent-after-s"));
        // The API says the same of the van, by the same limit.
        using (var list = await fleet.GetAsync("/v1/vehicles"))
        {
            Assert.Equal(LimitS, list.RootElement.GetProperty("silent_after_s").GetDouble());
            var van = list.RootElement.GetProperty("vehicles").EnumerateArray().Single(v => v.GetProperty("vehicle").GetString() == "live-van");
            Assert.Equal("silent", van.GetProperty("status").GetString());
            Assert.True(van.GetProperty("last_received_age_s").GetDouble() > LimitS);
        }

        page.Screenshot("freshness-silent");

        // The choices are remembered by the browser and the metric units come back when chosen.
        Choose(page, "pref-units", "metric");
        DashboardPage.WaitFor(() => Row(page)?.FindElement(By.CssSelector("td.col-speed")).Text.EndsWith("km/h", StringComparison.Ordinal) == true,
            TimeSpan.FromSeconds(10), "the speed in km/h");
        Assert.Contains("\"zone\":\"utc\"", (string)page.Script("return localStorage.getItem('fusionservice.preferences');")!, StringComparison.Ordinal);
        page.Script("localStorage.removeItem('fusionservice.preferences');");
    }

    /// <summary>Start of the longest stretch the van drives faster than 3 m/s, and its length.</summary>
    internal static long LongestDrive(FusionService.Scenarios.TruthTrajectory truth, out long lengthUs)
    {
        long bestStart = 0, runStart = -1;
        lengthUs = 0;
        foreach (var s in truth.Samples)
        {
            if (s.SpeedMps > 3)
            {
                runStart = runStart < 0 ? s.TimeUs : runStart;
                if (s.TimeUs - runStart > lengthUs)
                {
                    lengthUs = s.TimeUs - runStart;
                    bestStart = runStart;
                }
            }
            else
            {
                runStart = -1;
            }
        }

        return bestStart;
    }

    // The live van's cells as text, read in one script run: the table is redrawn at every poll, and an element found
    // before a redraw and read after it is stale (a clean-clone CI run failed so between two reads of one row).
    private static Dictionary<string, string> Cells(DashboardPage page)
    {
        var texts = page.Script(
            "const row = document.querySelector(\"#van-table tr[data-vehicle='live-van']\");"
            + "const t = s => { const e = row.querySelector(s); return e ? e.innerText : ''; };"
            + "return { state: t('td.col-state .badge'), heading: t('td.col-heading'), speed: t('td.col-speed'),"
            + " clock: t('td.col-age .muted'), heard: t('td.col-age .sensor-ages'), ellipse: t('td.col-ellipse'),"
            + " age: t('td.col-age'), ageS: row.getAttribute('data-age-s') || '' };") as IReadOnlyDictionary<string, object>
            ?? throw new Xunit.Sdk.XunitException("live-van has no row in the fleet table");
        return texts.ToDictionary(p => p.Key, p => p.Value?.ToString() ?? string.Empty, StringComparer.Ordinal);
    }

    private static IWebElement? Row(DashboardPage page) =>
        page.Driver.FindElements(By.CssSelector("#van-table tr[data-vehicle='live-van']")).FirstOrDefault();

    /// <summary>Picks an option of a select as a person would (the change event included).</summary>
    internal static void Choose(DashboardPage page, string id, string value) =>
        page.Script("const s = document.getElementById(arguments[0]); s.value = arguments[1]; s.dispatchEvent(new Event('change', { bubbles: true }));", id, value);
}
