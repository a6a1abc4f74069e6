// Issue 15: any past window of a van — chosen with the from/to pickers, not refreshed; the newest minutes follow new data.
using System.Globalization;
using FusionService.Browser.Tests.Infrastructure;
using OpenQA.Selenium;

namespace FusionService.Browser.Tests;

[Collection(BrowserTests.Name)]
public sealed class PastWindowTests(DashboardFixture fixture)
{
    [Fact]
    public async Task Issue15_a_past_window_chosen_with_the_pickers_shows_that_window_only_and_stays_put()
    {
        var fleet = await fixture.CreateOwnFleetAsync("past-window");
        var (truth, measurements) = OwnFleet.Round(stops: 3, seed: 4500);
        // The round ends an hour ago; the window is minutes 5 to 12 of it, on whole seconds.
        long endUs = (DateTimeOffset.UtcNow.ToUnixTimeMilliseconds() * 1000) - 3_600_000_000;
        long shiftUs = endUs - truth.EndTimeUs;
        var posted = OwnFleet.Shift(measurements, shiftUs);
        await fleet.PostAsync("shift-van", posted);
        await fleet.WaitForEstimateAsync("shift-van", posted[^1].TimeUs, TimeSpan.FromSeconds(180));
        var from = DateTimeOffset.FromUnixTimeMilliseconds(((truth.StartTimeUs + shiftUs) / 1000) + 300_000);
        from = from.AddTicks(-(from.Ticks % TimeSpan.TicksPerSecond));
        var to = from.AddMinutes(7);

        var page = new DashboardPage(fixture);
        page.SignIn(fleet.ReadKey);
        FreshnessTests.Choose(page, "pref-zone", "utc");
        page.Driver.Navigate().GoToUrl(new Uri(fixture.BaseAddress, "#/van/shift-van"));
        DashboardPage.WaitFor(() => View(page).GetDomAttribute("data-loads") is { Length: > 0 }, TimeSpan.FromSeconds(60), "the van's view");
        Assert.Equal("true", View(page).GetDomAttribute("data-live"));

        // Type the window into the pickers (UTC, as chosen) and show it.
        SetPicker(page, "window-from", from);
        SetPicker(page, "window-to", to);
        page.Driver.FindElement(By.Id("window-apply")).Click();
        DashboardPage.WaitFor(
            () => View(page).GetDomAttribute("data-from-ms") == from.ToUnixTimeMilliseconds().ToString(CultureInfo.InvariantCulture)
                && View(page).GetDomAttribute("data-live") == "false",
            TimeSpan.FromSeconds(60), "the picked window");
        Assert.Equal(to.ToUnixTimeMilliseconds().ToString(CultureInfo.InvariantCulture), View(page).GetDomAttribute("data-to-ms"));
        Assert.False(page.Visible("#window-live"), "a past window must not say it follows new data");
        Assert.Equal("custom", page.Driver.FindElement(By.Id("vehicle-window")).GetDomProperty("value"));

        // The drawn paths hold the window's points only: every smoothed point's time lies in [from, to). The path of the
        // window shown before may still be drawn for a moment (a clean-clone run read 940 points of it), so wait until the
        // drawn path starts inside the picked window.
        long fromMs = from.ToUnixTimeMilliseconds(), toMs = to.ToUnixTimeMilliseconds();
        DashboardPage.WaitFor(
            () =>
            {
                var path = page.Driver.FindElement(By.Id("smoothed-path"));
                return int.Parse(path.GetDomAttribute("data-points") ?? "0", CultureInfo.InvariantCulture) > 100
                    && long.TryParse(path.GetDomAttribute("data-first-ms"), CultureInfo.InvariantCulture, out long firstMs) && firstMs >= fromMs;
            },
            TimeSpan.FromSeconds(60), "the smoothed path of the window");
        var smoothedPath = page.Driver.FindElement(By.Id("smoothed-path"));
        Assert.InRange(long.Parse(smoothedPath.GetDomAttribute("data-first-ms")!, CultureInfo.InvariantCulture), fromMs, toMs - 1);
        Assert.InRange(long.Parse(smoothedPath.GetDomAttribute("data-last-ms")!, CultureInfo.InvariantCulture), fromMs, toMs - 1);
        string bounds = (string)page.Script("""
            const s = document.getElementById('scrubber');
            return `${s.min} ${s.max}`;
            """)!;
        Assert.Equal($"{from.ToUnixTimeMilliseconds()} {to.ToUnixTimeMilliseconds()}", bounds);
        int points = int.Parse(page.Driver.FindElement(By.Id("smoothed-path")).GetDomAttribute("data-points")!, CultureInfo.InvariantCulture);
        // About one smoothed point per second (Tracks:SmoothedIntervalS default 1 s) over 7 min: 420, less any gap.
        Assert.InRange(points, 380, 421);

        // A plain line above the explanation.
        DashboardPage.WaitFor(() => page.Driver.FindElement(By.Id("explain-plain")).Text.StartsWith("At ", StringComparison.Ordinal),
            TimeSpan.FromSeconds(60), "the plain line above the explanation");
        string plain = page.Driver.FindElement(By.Id("explain-plain")).Text;
        Assert.Contains("UTC", plain, StringComparison.Ordinal);
        Assert.Contains("95 % of the time", plain, StringComparison.Ordinal);
        page.Screenshot("past-window");

        // A past window is not fetched again.
        string loads = View(page).GetDomAttribute("data-loads")!;
        Thread.Sleep(TimeSpan.FromSeconds(7));
        Assert.Equal(loads, View(page).GetDomAttribute("data-loads"));

        // The newest 10 minutes follow new data: fetched again every few seconds.
        FreshnessTests.Choose(page, "vehicle-window", "10");
        DashboardPage.WaitFor(() => View(page).GetDomAttribute("data-live") == "true", TimeSpan.FromSeconds(30), "the newest 10 min");
        int liveLoads = int.Parse(View(page).GetDomAttribute("data-loads")!, CultureInfo.InvariantCulture);
        DashboardPage.WaitFor(() => int.Parse(View(page).GetDomAttribute("data-loads")!, CultureInfo.InvariantCulture) > liveLoads,
            TimeSpan.FromSeconds(30), "a live refresh");
        Assert.True(page.Visible("#window-live"));
        page.Driver.Navigate().GoToUrl(new Uri(fixture.BaseAddress, "#/fleet"));
    }

    private static IWebElement View(DashboardPage page) => page.Driver.FindElement(By.Id("vehicle-view"));

    private static void SetPicker(DashboardPage page, string id, DateTimeOffset time) =>
        page.Script(
            "const i = document.getElementById(arguments[0]); i.value = arguments[1]; i.dispatchEvent(new Event('input', { bubbles: true }));",
            id, time.UtcDateTime.ToString("yyyy-MM-dd'T'HH:mm:ss", CultureInfo.InvariantCulture));
}
