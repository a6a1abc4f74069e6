// gnss_silent_while_moving on its own (definition: GnssSilentRule).
using System.Text.Json;
using FusionService.Alerts;
using FusionService.Alerts.Rules;

namespace FusionService.Tests.Alerts.Rules;

/// <summary>Expected behaviour from <see cref="GnssSilentRule"/> (defaults silent_s 30, min_speed_mps 2, clear_s 30; a design choice).</summary>
public sealed class GnssSilentAlertTests
{
    [Fact]
    public void More_than_silent_s_without_a_fix_while_moving_opens_it_from_the_last_fix_and_clear_s_resolves()
    {
        var feed = new RuleFeed(new GnssSilentAlert());
        feed.Feed(feed.Fix(0), RuleFeed.Accepted(1, 2), RuleFeed.Running(0, speedMps: 5));
        for (int i = 1; i <= 30; i++)
        {
            feed.Feed(feed.Wheel(i), RuleFeed.Accepted(1, 1), RuleFeed.Running(i, speedMps: 5));
        }

        Assert.Empty(feed.Take());
        feed.Feed(feed.Wheel(31), RuleFeed.Accepted(1, 1), RuleFeed.Running(31, speedMps: 5));
        var opened = Assert.Single(feed.Take());
        Assert.Equal(RuleFeed.At(0), opened.StartedAt.ToUnixTimeMilliseconds() * 1000);
        Assert.Equal("No GNSS position for 31 s while moving at 5.0 m/s", opened.Summary);

        for (int i = 32; i <= 44; i++)
        {
            feed.Feed(feed.Wheel(i), RuleFeed.Accepted(1, 1), RuleFeed.Running(i, speedMps: 5));
        }

        using (var details = JsonDocument.Parse(feed.Take()[^1].DetailsJson))
        {
            Assert.Equal(44, details.RootElement.GetProperty("silent_s").GetDouble());
        }

        feed.Feed(feed.Fix(45), RuleFeed.Accepted(1, 2), RuleFeed.Running(45, speedMps: 5));
        feed.Feed(feed.Wheel(73.5), RuleFeed.Accepted(1, 1), RuleFeed.Running(73.5, speedMps: 5));
        Assert.DoesNotContain(feed.Take(), o => o.Resolve);
        feed.Feed(feed.Wheel(74), RuleFeed.Accepted(1, 1), RuleFeed.Running(74, speedMps: 5));
        var resolved = feed.Take()[^1];
        Assert.True(resolved.Resolve);
        Assert.Equal(RuleFeed.At(44), resolved.LastSeenAt.ToUnixTimeMilliseconds() * 1000);
    }

    [Fact]
    public void Standing_or_before_the_first_fix_opens_nothing()
    {
        var feed = new RuleFeed(new GnssSilentAlert());
        for (int i = 0; i < 100; i++)
        {
            feed.Feed(feed.Wheel(i), RuleFeed.Accepted(1, 1), RuleFeed.Running(i, speedMps: 5));
        }

        feed.Feed(feed.Fix(100), RuleFeed.Accepted(1, 2), RuleFeed.Running(100, speedMps: 1.5));
        for (int i = 101; i < 200; i++)
        {
            feed.Feed(feed.Wheel(i), RuleFeed.Accepted(1, 1), RuleFeed.Running(i, speedMps: 1.5));
        }

        Assert.Empty(feed.Take());
    }
}
