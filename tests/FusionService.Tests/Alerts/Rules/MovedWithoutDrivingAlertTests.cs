// moved_without_driving on its own (definition: MovedWithoutDrivingRule).
using System.Text.Json;
using FusionService.Alerts;
using FusionService.Alerts.Rules;
using FusionService.Estimation.Tracking;

namespace FusionService.Tests.Alerts.Rules;

/// <summary>Expected behaviour from <see cref="MovedWithoutDrivingRule"/> (default clear_s 60, a design choice).</summary>
public sealed class MovedWithoutDrivingAlertTests
{
    private static TrackState Carried(double s, double sinceS)
    {
        var state = RuleFeed.Running(s, speedMps: 4);
        state.Carried = true;
        state.CarriedSinceUs = RuleFeed.At(sinceS);
        return state;
    }

    [Fact]
    public void A_carry_opens_from_its_start_stays_while_it_lasts_and_resolves_clear_s_after()
    {
        var feed = new RuleFeed(new MovedWithoutDrivingAlert());
        var carried = RuleFeed.Accepted(1, 2) with { Carried = true };
        feed.Feed(feed.Velocity(10), carried, Carried(10, sinceS: 5));
        var opened = Assert.Single(feed.Take());
        Assert.Equal(RuleFeed.At(5), opened.StartedAt.ToUnixTimeMilliseconds() * 1000);
        Assert.Equal("Moving at 4.0 m/s by GNSS while the wheels are still: towed, on a ferry or lifted? Wheel speed is set aside until they turn again", opened.Summary);

        for (int i = 11; i <= 100; i++)
        {
            feed.Feed(feed.Velocity(i), carried, Carried(i, sinceS: 5));
        }

        using (var details = JsonDocument.Parse(feed.Take()[^1].DetailsJson))
        {
            Assert.Equal("2026-05-28T20:28:20.000000Z", details.RootElement.GetProperty("last_seen_at").GetString());
        }

        feed.Feed(feed.Velocity(159), RuleFeed.Accepted(1, 2), RuleFeed.Running(159, speedMps: 4));
        Assert.DoesNotContain(feed.Take(), o => o.Resolve);
        feed.Feed(feed.Velocity(160), RuleFeed.Accepted(1, 2), RuleFeed.Running(160, speedMps: 4));
        var resolved = feed.Take()[^1];
        Assert.True(resolved.Resolve);
        Assert.Equal(RuleFeed.At(100), resolved.LastSeenAt.ToUnixTimeMilliseconds() * 1000);
    }
}
