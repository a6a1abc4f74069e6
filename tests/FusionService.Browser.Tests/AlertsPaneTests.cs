// Issue 15: the alerts pane an operator acts on — open alerts from the server, worst first, a plain line with the numbers
// behind "details", acknowledged by an admin key and shown with who and when, and a link to the van at the alert's time.
using System.Globalization;
using FusionService.Browser.Tests.Infrastructure;
using OpenQA.Selenium;

namespace FusionService.Browser.Tests;

[Collection(BrowserTests.Name)]
public sealed class AlertsPaneTests(DashboardFixture fixture)
{
    private static readonly Dictionary<string, int> Rank = new(StringComparer.Ordinal) { ["critical"] = 3, ["warning"] = 2, ["info"] = 1 };

    [Fact]
    public void Issue15_an_alert_is_acknowledged_by_an_admin_key_and_shown_with_who_and_when_then_opens_its_van_at_its_time()
    {
        var page = new DashboardPage(fixture);
        try
        {
            Run(page);
        }
        catch (Xunit.Sdk.XunitException)
        {
            page.Screenshot("alerts-pane-failed");
            throw;
        }
    }

    private void Run(DashboardPage page)
    {
        page.SignIn(fixture.AdminKey);
        FreshnessTests.Choose(page, "pref-zone", "utc");
        // Hide the acknowledged ones: only open alerts, as the server gave them.
        page.Script("const c = document.getElementById('alerts-show-acknowledged'); if (c.checked) c.click();");
        DashboardPage.WaitFor(
            () => page.Driver.FindElements(By.CssSelector("#alerts-list li.alert[data-state='open'] button.acknowledge")).Count > 0,
            TimeSpan.FromSeconds(180), "an open alert of the demo fleet");

        // Worst first: the severities down the list never rise.
        var severities = page.Driver.FindElements(By.CssSelector("#alerts-list li.alert[data-state='open']"))
            .Select(li => li.GetDomAttribute("data-severity")!).ToList();
        for (int i = 1; i < severities.Count; i++)
        {
            Assert.True(Rank[severities[i]] <= Rank[severities[i - 1]], "severity order: " + string.Join(", ", severities));
        }

        // The fleet table marks the vans with open alerts.
        DashboardPage.WaitFor(
            () => page.Driver.FindElements(By.CssSelector("#van-table tr[data-open-alerts]"))
                .Any(r => int.Parse(r.GetDomAttribute("data-open-alerts")!, CultureInfo.InvariantCulture) > 0),
            TimeSpan.FromSeconds(20), "an open-alert badge in the fleet table");

        // A plain line, and the numbers behind the details toggle.
        string id = string.Empty, vehicle = string.Empty;
        DashboardPage.WaitFor(
            () =>
            {
                var alert = page.Driver.FindElement(By.CssSelector("#alerts-list li.alert[data-state='open']"));
                id = alert.GetDomAttribute("data-alert-id")!;
                vehicle = alert.GetDomAttribute("data-vehicle")!;
                Assert.False(string.IsNullOrWhiteSpace(alert.FindElement(By.CssSelector(".alert-plain")).Text), "no plain line");
                Assert.False(alert.FindElement(By.CssSelector("details.alert-details table")).Displayed, "details shown before the toggle");
                alert.FindElement(By.CssSelector("details.alert-details > summary")).Click();
                return true;
            },
            TimeSpan.FromSeconds(20), "the first open alert's details toggle");
        DashboardPage.WaitFor(
            () => page.Driver.FindElement(By.CssSelector($"#alerts-list li.alert[data-alert-id='{id}'] details.alert-details table")).Displayed,
            TimeSpan.FromSeconds(10), "the alert's numbers after the toggle");
        string startedText = page.Driver.FindElement(By.CssSelector($"#alerts-list li.alert[data-alert-id='{id}'] details.alert-details table")).Text;
        Assert.Contains("started", startedText, StringComparison.Ordinal);

        // Its link to the van at the alert's time, read while it is open.
        string href = page.Driver.FindElement(By.CssSelector($"#alerts-list li.alert[data-alert-id='{id}'] a.alert-vehicle")).GetDomAttribute("href")!;
        Assert.StartsWith($"#/van/{vehicle}?", href, StringComparison.Ordinal);

        // Acknowledge it with the admin key (label "browser test admin"): the pane says who and when. The demo runs at 60x,
        // so the alert may resolve (and leave the pane) seconds later: what it showed is read in one script run.
        var before = DateTimeOffset.UtcNow.AddSeconds(-2);
        page.Script("const c = document.getElementById('alerts-show-acknowledged'); if (!c.checked) c.click();");
        DashboardPage.WaitFor(
            () =>
            {
                page.Driver.FindElement(By.CssSelector($"#alerts-list li.alert[data-alert-id='{id}'] button.acknowledge")).Click();
                return true;
            },
            TimeSpan.FromSeconds(20), "a click on Acknowledge");
        string shown = string.Empty;
        DashboardPage.WaitFor(
            () =>
            {
                shown = (string)page.Script("""
                    const s = document.querySelector(`#alerts-list li.alert[data-alert-id='${arguments[0]}'][data-state='acknowledged'] .alert-state`);
                    return s ? JSON.stringify({ by: s.dataset.acknowledgedBy, at: s.dataset.acknowledgedAt, text: s.textContent }) : '';
                    """, id)!;
                return shown.Length > 0;
            },
            TimeSpan.FromSeconds(20), "alert " + id + " shown as acknowledged");
        using (var ack = System.Text.Json.JsonDocument.Parse(shown))
        {
            Assert.Equal("browser test admin", ack.RootElement.GetProperty("by").GetString());
            var at = DateTimeOffset.Parse(ack.RootElement.GetProperty("at").GetString()!, CultureInfo.InvariantCulture);
            Assert.InRange(at, before, DateTimeOffset.UtcNow.AddSeconds(2));
            Assert.Contains("acknowledged by browser test admin at " + at.UtcDateTime.ToString("yyyy-MM-dd HH:mm:ss", CultureInfo.InvariantCulture) + " UTC",
                ack.RootElement.GetProperty("text").GetString(), StringComparison.Ordinal);
        }

        page.Screenshot("alert-acknowledged");

        // The link opens the van's view on a past window around the alert, with the alert's start selected.
        page.Script("location.hash = arguments[0];", href);
        DashboardPage.WaitFor(
            () => page.Visible("#vehicle-view") && page.Driver.FindElement(By.Id("vehicle-view")).GetDomAttribute("data-loads") is { Length: > 0 },
            TimeSpan.FromSeconds(60), "the van's view opened from the alert");
        var view = page.Driver.FindElement(By.Id("vehicle-view"));
        long fromMs = long.Parse(view.GetDomAttribute("data-from-ms")!, CultureInfo.InvariantCulture);
        long toMs = long.Parse(view.GetDomAttribute("data-to-ms")!, CultureInfo.InvariantCulture);
        var query = System.Web.HttpUtility.ParseQueryString(href[(href.IndexOf('?', StringComparison.Ordinal) + 1)..]);
        long startedMs = DateTimeOffset.Parse(query["at"]!, CultureInfo.InvariantCulture).ToUnixTimeMilliseconds();
        Assert.InRange(startedMs, fromMs, toMs);
        Assert.Equal(DateTimeOffset.Parse(query["from"]!, CultureInfo.InvariantCulture).ToUnixTimeMilliseconds(), fromMs);
        long selected = (long)Math.Round(DashboardPage.Number(page.Driver.FindElement(By.Id("scrubber")).GetDomProperty("value")!));
        Assert.InRange(selected, fromMs, toMs);
    }
}
