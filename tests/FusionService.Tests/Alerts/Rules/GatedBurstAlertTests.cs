// gated_burst on its own: grouping, counting once, resolving on data time (definition: GatedBurstRule).
using System.Text.Json;
using FusionService.Alerts;
using FusionService.Alerts.Rules;
using FusionService.Estimation.Tracking;

namespace FusionService.Tests.Alerts.Rules;

/// <summary>
/// The expected behaviour is the rule's documented definition (<see cref="GatedBurstRule"/>: defaults window 30 s,
/// min_count 3, clear_s 120, GNSS positions only), a design choice of the project, not a published value.
/// </summary>
public sealed class GatedBurstAlertTests
{
    [Fact]
    public void Third_gated_fix_within_the_window_opens_one_alert_that_later_ones_extend_and_clear_s_resolves()
    {
        var feed = new RuleFeed(new GatedBurstAlert());
        feed.Feed(feed.Fix(0), RuleFeed.Gated(30));
        feed.Feed(feed.Fix(10), RuleFeed.Gated(50));
        Assert.Empty(feed.Take());

        feed.Feed(feed.Fix(20), RuleFeed.Gated(40));
        var opened = Assert.Single(feed.Take());
        Assert.Equal((AlertKinds.GatedBurst, "warning", false, 3), (opened.Kind, opened.Severity, opened.Resolve, opened.Count));
        Assert.Equal(RuleFeed.At(0), opened.StartedAt.ToUnixTimeMilliseconds() * 1000);
        Assert.Equal(RuleFeed.At(20), opened.LastSeenAt.ToUnixTimeMilliseconds() * 1000);
        Assert.Equal("3 GNSS fixes gated in 20 s", opened.Summary);
        using (var details = JsonDocument.Parse(opened.DetailsJson))
        {
            Assert.Equal(50, details.RootElement.GetProperty("max_nis").GetDouble());
            Assert.Equal(3, details.RootElement.GetProperty("by_sensor").GetProperty("gnss_position").GetInt32());
        }

        var fourth = feed.Fix(50);
        feed.Feed(fourth, RuleFeed.Gated());
        feed.Feed(fourth, RuleFeed.Gated());
        Assert.Equal(4, feed.Take()[^1].Count);

        feed.Feed(feed.Fix(169.999), RuleFeed.Accepted(1, 2));
        Assert.DoesNotContain(feed.Observations, o => o.Resolve);
        feed.Feed(feed.Fix(170), RuleFeed.Accepted(1, 2));
        var resolved = feed.Take()[^1];
        Assert.True(resolved.Resolve);
        Assert.Equal(4, resolved.Count);
    }

    [Fact]
    public void Gated_fixes_further_apart_than_the_window_and_gated_wheel_samples_open_nothing()
    {
        var feed = new RuleFeed(new GatedBurstAlert());
        feed.Feed(feed.Fix(0), RuleFeed.Gated());
        feed.Feed(feed.Fix(31), RuleFeed.Gated());
        feed.Feed(feed.Fix(62), RuleFeed.Gated());
        for (int i = 0; i < 10; i++)
        {
            feed.Feed(feed.Wheel(63 + (0.1 * i)), RuleFeed.Gated());
        }

        Assert.Empty(feed.Take());
    }

    [Fact]
    public void An_open_alert_resolves_at_the_next_outcome_once_the_rule_is_switched_off()
    {
        var feed = new RuleFeed(new GatedBurstAlert());
        for (int i = 0; i < 3; i++)
        {
            feed.Feed(feed.Fix(i), RuleFeed.Gated());
        }

        feed.Settings = feed.Settings with { GatedBurst = new GatedBurstRule { Enabled = false } };
        feed.Feed(feed.Fix(4), RuleFeed.Gated());
        var only = Assert.Single(feed.Take());
        Assert.True(only.Resolve);
        Assert.Equal(3, only.Count);
    }
}
