// sensor_isolated on its own (definition: SensorIsolatedRule).
using System.Text.Json;
using FusionService.Alerts;
using FusionService.Alerts.Rules;
using FusionService.Estimation.Tracking;

namespace FusionService.Tests.Alerts.Rules;

/// <summary>Expected behaviour from <see cref="SensorIsolatedRule"/> (default clear_s 60, a design choice): one alert naming every isolated stream.</summary>
public sealed class SensorIsolatedAlertTests
{
    private static TrackState Isolated(double s, bool gyro, bool course)
    {
        var state = RuleFeed.Running(s, speedMps: 5);
        state.Agreement.GyroIsolated = gyro;
        state.Agreement.GyroIsolatedSinceUs = RuleFeed.At(10);
        state.Agreement.CourseIsolated = course;
        state.Agreement.CourseIsolatedSinceUs = RuleFeed.At(50);
        state.Agreement.LastTurnRad = Math.PI / 2;
        state.Agreement.LastTurnMismatchRad = -Math.PI;
        return state;
    }

    [Fact]
    public void An_isolated_gyro_opens_it_refreshed_once_a_minute_a_second_stream_is_added_and_clear_s_resolves()
    {
        var feed = new RuleFeed(new SensorIsolatedAlert());
        feed.Feed(feed.Imu(20), RuleFeed.Accepted(1, 2), Isolated(20, gyro: true, course: false));
        var opened = Assert.Single(feed.Take());
        Assert.Equal(RuleFeed.At(10), opened.StartedAt.ToUnixTimeMilliseconds() * 1000);
        Assert.Equal("No longer fused, disagrees with the other sensors: the gyro (its last turn read -90 degrees where the GNSS course turned 90: wrong sign or axis?)", opened.Summary);

        feed.Feed(feed.Imu(79.9), RuleFeed.Accepted(1, 2), Isolated(79.9, gyro: true, course: false));
        Assert.Single(feed.Take());
        feed.Feed(feed.Imu(80), RuleFeed.Accepted(1, 2), Isolated(80, gyro: true, course: false));
        Assert.Equal(2, feed.Take().Count);

        feed.Feed(feed.Velocity(81), RuleFeed.Accepted(1, 1), Isolated(81, gyro: true, course: true));
        var both = feed.Take()[^1];
        using (var details = JsonDocument.Parse(both.DetailsJson))
        {
            Assert.Equal(["imu", "gnss_course"], details.RootElement.GetProperty("streams").EnumerateArray().Select(e => e.GetString()));
        }

        feed.Feed(feed.Imu(140.5), RuleFeed.Accepted(1, 2), RuleFeed.Running(140.5, speedMps: 5));
        Assert.DoesNotContain(feed.Take(), o => o.Resolve);
        feed.Feed(feed.Imu(141), RuleFeed.Accepted(1, 2), RuleFeed.Running(141, speedMps: 5));
        Assert.True(feed.Take()[^1].Resolve);
    }
}
