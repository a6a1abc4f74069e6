// wheel_scale_out_of_band on its own (definition: WheelScaleRule).
using System.Text.Json;
using FusionService.Alerts;
using FusionService.Alerts.Rules;

namespace FusionService.Tests.Alerts.Rules;

/// <summary>
/// Expected behaviour from <see cref="WheelScaleRule"/>: band 0.97-1.03, z 1.96 (the two-sided 95 % normal quantile,
/// derived), max_sd 0.005, hold_s 120, clear_s 600 (design choices).
/// </summary>
public sealed class WheelScaleAlertTests
{
    // Standard deviation 0.001: settled, and 1.06 - 1.96 * 0.001 lies above 1.03.
    private const double SettledVariance = 1e-6;

    [Fact]
    public void A_settled_scale_beyond_the_band_opens_after_hold_s_and_resolves_clear_s_after_it_came_back()
    {
        var feed = new RuleFeed(new WheelScaleAlert());
        for (int i = 0; i < 120; i++)
        {
            feed.Feed(feed.Wheel(i), RuleFeed.Accepted(1, 1), RuleFeed.Running(i, 5, 1.06, SettledVariance));
        }

        Assert.Empty(feed.Take());
        feed.Feed(feed.Wheel(120), RuleFeed.Accepted(1, 1), RuleFeed.Running(120, 5, 1.06, SettledVariance));
        var opened = Assert.Single(feed.Take());
        Assert.Equal(("info", RuleFeed.At(120)), (opened.Severity, opened.StartedAt.ToUnixTimeMilliseconds() * 1000));
        Assert.Equal("Wheel-speed scale 1.0600 ± 0.0010 outside 0.97-1.03: check the tyre size and pressure", opened.Summary);
        using (var details = JsonDocument.Parse(opened.DetailsJson))
        {
            Assert.Equal(1.06, details.RootElement.GetProperty("wheel_scale").GetDouble());
        }

        feed.Feed(feed.Wheel(121), RuleFeed.Accepted(1, 1), RuleFeed.Running(121, 5, 1.0, SettledVariance));
        feed.Feed(feed.Wheel(719), RuleFeed.Accepted(1, 1), RuleFeed.Running(719, 5, 1.0, SettledVariance));
        Assert.DoesNotContain(feed.Take(), o => o.Resolve);
        feed.Feed(feed.Wheel(720), RuleFeed.Accepted(1, 1), RuleFeed.Running(720, 5, 1.0, SettledVariance));
        Assert.True(feed.Take()[^1].Resolve);
    }

    [Fact]
    public void An_unsettled_estimate_or_a_break_in_the_hold_opens_nothing()
    {
        var feed = new RuleFeed(new WheelScaleAlert());
        for (int i = 0; i < 300; i++)
        {
            // Standard deviation 0.01: above max_sd.
            feed.Feed(feed.Wheel(i), RuleFeed.Accepted(1, 1), RuleFeed.Running(i, 5, 1.10, 1e-4));
        }

        for (int i = 300; i < 600; i++)
        {
            double scale = i == 400 || i == 500 ? 1.0 : 1.06;
            feed.Feed(feed.Wheel(i), RuleFeed.Accepted(1, 1), RuleFeed.Running(i, 5, scale, SettledVariance));
        }

        Assert.Empty(feed.Take());
    }
}
