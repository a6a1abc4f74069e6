// Issue 15: the raw values of a van's explanation and of an alert's details follow the unit system the reader chose.
using System.Globalization;
using System.Text.Json;
using FusionService.Browser.Tests.Infrastructure;
using FusionService.Estimation.Measurements;
using OpenQA.Selenium;

namespace FusionService.Browser.Tests;

[Collection(BrowserTests.Name)]
public sealed class UnitSystemTests(DashboardFixture fixture)
{
    // NIST SP 811 (2008), Appendix B: 1 ft = 0.3048 m exactly, 1 mi = 1609.344 m exactly (published); hence
    // 1 mi/h = 1609.344 m / 3600 s = 0.44704 m/s exactly (derived). 1 km/h = 1000 m / 3600 s (SI definitions).
    private const double MetresPerFoot = 0.3048;
    private const double MetresPerSecondPerMph = 1609.344 / 3600.0;
    private const double KilometresPerHourPerMetrePerSecond = 3.6;

    [Fact]
    public async Task Issue15_raw_values_in_the_explanation_and_alert_details_follow_the_chosen_unit_system()
    {
        var fleet = await fixture.CreateOwnFleetAsync("units");
        var (truth, measurements) = OwnFleet.Round(stops: 3, seed: 4700);
        long driveUs = FreshnessTests.LongestDrive(truth, out long driveLengthUs);
        Assert.True(driveLengthUs >= 60_000_000, $"the round's longest drive lasts only {driveLengthUs / 1e6:0} s");
        // GNSS stops 10 s into that drive and the upload ends 40 s later with the van still driving faster than 3 m/s:
        // gnss_silent_while_moving (no GNSS for > 30 s above 2 m/s, the rule's defaults) opens and stays open.
        long gapFromUs = driveUs + 10_000_000, endUs = driveUs + 50_000_000;
        var kept = measurements
            .Where(m => m.TimeUs < endUs && !(m.Kind is SensorKind.GnssPosition or SensorKind.GnssVelocity && m.TimeUs >= gapFromUs))
            .ToList();
        // The upload ends ten minutes ago.
        long shiftUs = (DateTimeOffset.UtcNow.ToUnixTimeMilliseconds() * 1000) - 600_000_000 - endUs;
        var posted = OwnFleet.Shift(kept, shiftUs);
        await fleet.PostAsync("units-van", posted);
        await fleet.WaitForEstimateAsync("units-van", posted[^1].TimeUs, TimeSpan.FromSeconds(180));
        await WaitForAlertSpeedAsync(fleet);

        var page = new DashboardPage(fixture);
        page.SignIn(fleet.ReadKey);
        FreshnessTests.Choose(page, "pref-units", "metric");
        // The van's view around the drive, the explanation at 5 s into it (GNSS still there: positions with accuracy_m).
        string Iso(long us) => DateTimeOffset.FromUnixTimeMilliseconds((us + shiftUs) / 1000).ToString("yyyy-MM-dd'T'HH:mm:ss.fff'Z'", CultureInfo.InvariantCulture);
        page.Driver.Navigate().GoToUrl(new Uri(fixture.BaseAddress,
            $"#/van/units-van?from={Iso(driveUs - 60_000_000)}&to={Iso(endUs + 10_000_000)}&at={Iso(driveUs + 5_000_000)}"));
        DashboardPage.WaitFor(() => Raw(page, "gnss_position", "accuracy_m") is not null && Raw(page, "wheel", "speed_mps") is not null,
            TimeSpan.FromSeconds(60), "a GNSS accuracy and a wheel speed in the explanation");
        DashboardPage.WaitFor(() => AlertRow(page) is not null, TimeSpan.FromSeconds(30), "the alert's speed in its details");
        page.Screenshot("units-metric");
        // The alert's speed as the API gives it (SI), read after the page showed it (its details grow while the gap lasts;
        // the upload has ended and every measurement was processed, so it no longer changes).
        double alertSpeedMps = await WaitForAlertSpeedAsync(fleet);

        // Metric: accuracy in m, wheel speed in km/h, the alert's speed in km/h, each with its unit.
        var (accuracyM, accuracyText) = Raw(page, "gnss_position", "accuracy_m")!.Value;
        AssertShown("accuracy", accuracyM, "m", 2, accuracyText);
        var (wheelMps, wheelText) = Raw(page, "wheel", "speed_mps")!.Value;
        AssertShown("speed", wheelMps * KilometresPerHourPerMetrePerSecond, "km/h", 1, wheelText);
        AssertShown(null, alertSpeedMps * KilometresPerHourPerMetrePerSecond, "km/h", 1, AlertRow(page)!);

        // Imperial: the same raw values in ft and mph, redrawn at once (the API answers stay in SI).
        FreshnessTests.Choose(page, "pref-units", "imperial");
        DashboardPage.WaitFor(() => Raw(page, "gnss_position", "accuracy_m")?.Text.EndsWith(" ft", StringComparison.Ordinal) == true
                && AlertRow(page)?.EndsWith(" mph", StringComparison.Ordinal) == true,
            TimeSpan.FromSeconds(30), "the explanation and the alert details in imperial units");
        page.Screenshot("units-imperial");
        var imperialAccuracy = Raw(page, "gnss_position", "accuracy_m")!.Value;
        Assert.Equal(accuracyM, imperialAccuracy.Si);
        AssertShown("accuracy", accuracyM / MetresPerFoot, "ft", 2, imperialAccuracy.Text);
        var imperialWheel = Raw(page, "wheel", "speed_mps")!.Value;
        Assert.Equal(wheelMps, imperialWheel.Si);
        AssertShown("speed", wheelMps / MetresPerSecondPerMph, "mph", 1, imperialWheel.Text);
        AssertShown(null, alertSpeedMps / MetresPerSecondPerMph, "mph", 1, AlertRow(page)!);

        FreshnessTests.Choose(page, "pref-units", "metric");
        page.Script("localStorage.removeItem('fusionservice.preferences');");
        page.Driver.Navigate().GoToUrl(new Uri(fixture.BaseAddress, "#/fleet"));
    }

    /// <summary>The alert's speed_mps as the API gives it, once the alert is open.</summary>
    private static async Task<double> WaitForAlertSpeedAsync(OwnFleet fleet)
    {
        var deadline = DateTime.UtcNow + TimeSpan.FromSeconds(60);
        while (true)
        {
            using (var alerts = await fleet.GetAsync("/v1/alerts?state=open&kind=gnss_silent_while_moving&vehicle=units-van"))
            {
                var list = alerts.RootElement.GetProperty("alerts");
                if (list.GetArrayLength() > 0)
                {
                    return list[0].GetProperty("details").GetProperty("speed_mps").GetDouble();
                }
            }

            Assert.True(DateTime.UtcNow < deadline, "no open gnss_silent_while_moving alert for units-van");
            await Task.Delay(1000);
        }
    }

    /// <summary>The first raw value <paramref name="key"/> of a <paramref name="sensor"/> row in the explanation: its SI value and text.</summary>
    private static (double Si, string Text)? Raw(DashboardPage page, string sensor, string key)
    {
        var found = (IReadOnlyCollection<object>?)page.Script("""
            const words = { gnss_position: 'GNSS position', wheel: 'wheel speed' };
            for (const row of document.querySelectorAll('#explain-panel tbody tr')) {
              if (row.cells[1]?.textContent !== words[arguments[0]]) continue;
              const span = row.querySelector(`span.raw-value[data-key='${arguments[1]}']`);
              if (span) return [span.dataset.si, span.textContent];
            }
            return null;
            """, sensor, key);
        return found is null ? null : Pair(found);
    }

    /// <summary>The speed row of the open gnss_silent_while_moving alert's details as text ("speed 32.2 km/h").</summary>
    private static string? AlertRow(DashboardPage page) => (string?)page.Script("""
        const row = document.querySelector("#alerts-list li.alert[data-kind='gnss_silent_while_moving'][data-vehicle='units-van'] tr[data-key='speed_mps']");
        return row ? row.querySelector('th').textContent + ' ' + row.querySelector('td').textContent : null;
        """);

    private static (double Si, string Text) Pair(IReadOnlyCollection<object> found)
    {
        var items = found.Select(o => Convert.ToString(o, CultureInfo.InvariantCulture)!).ToList();
        return (double.Parse(items[0], CultureInfo.InvariantCulture), items[1]);
    }

    /// <summary>
    /// Text "[name ]number unit" with the number within half a unit of its last shown digit of <paramref name="expected"/>
    /// (the page rounds to <paramref name="digits"/> decimals; the conversion factors are exact).
    /// </summary>
    private static void AssertShown(string? name, double expected, string unit, int digits, string text)
    {
        string prefix = name is null ? "speed " : name + " ";
        Assert.StartsWith(prefix, text, StringComparison.Ordinal);
        Assert.EndsWith(" " + unit, text, StringComparison.Ordinal);
        string number = text[prefix.Length..^(unit.Length + 1)];
        Assert.Matches(@"^-?\d+\.\d{" + digits.ToString(CultureInfo.InvariantCulture) + "}$", number);
        AssertNear.Equal(expected, double.Parse(number, CultureInfo.InvariantCulture), (0.5 * Math.Pow(10, -digits)) + 1e-9, text);
    }
}
