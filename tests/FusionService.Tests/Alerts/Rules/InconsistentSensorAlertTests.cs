// inconsistent_sensor on its own: windows of NIS against the chi-square band (definition: InconsistentSensorRule).
using System.Text.Json;
using FusionService.Alerts;
using FusionService.Alerts.Rules;
using FusionService.Tests.Infrastructure;
using MathNet.Numerics.Distributions;

namespace FusionService.Tests.Alerts.Rules;

/// <summary>
/// Windows of 100 GNSS fixes (2 degrees of freedom each); three windows in a row outside the two-sided 95 % band open
/// the alert (the rule's defaults, a design choice). The band is recomputed with MathNet.Numerics (a general-purpose
/// reference library): [chi2(0.025; 200), chi2(0.975; 200)] / 100, about [1.63, 2.41] (Bar-Shalom, Li and Kirubarajan
/// 2001, NIS test; derived).
/// </summary>
public sealed class InconsistentSensorAlertTests
{
    private static readonly AlertRuleSettings NisOnly = AlertRuleSettings.Default with
    {
        InconsistentSensor = new InconsistentSensorRule { WhitenessSensors = [] },
    };

    [Fact]
    public void Three_windows_above_the_band_open_the_alert_and_a_window_inside_lets_it_resolve()
    {
        var feed = new RuleFeed(new InconsistentSensorAlert(), NisOnly);
        for (int i = 0; i < 299; i++)
        {
            feed.Feed(feed.Fix(i), RuleFeed.Accepted(nis: 4.0, dimension: 2));
        }

        Assert.Empty(feed.Take());
        feed.Feed(feed.Fix(299), RuleFeed.Accepted(nis: 4.0, dimension: 2));
        var opened = Assert.Single(feed.Take());
        Assert.Equal(RuleFeed.At(299), opened.StartedAt.ToUnixTimeMilliseconds() * 1000);
        Assert.Equal("Mean NIS of gnss_position outside its 95 % chi-square band for 3 windows of 100 samples", opened.Summary);
        using (var details = JsonDocument.Parse(opened.DetailsJson))
        {
            var sensor = details.RootElement.GetProperty("sensors")[0];
            Assert.Equal("too_optimistic", sensor.GetProperty("verdict").GetString());
            AssertNear.Equal(4.0, sensor.GetProperty("mean_nis").GetDouble(), 1e-12, "mean NIS (dimensionless)");
            var band = sensor.GetProperty("nis_interval");
            AssertNear.Equal(ChiSquared.InvCDF(200, 0.025) / 100, band.GetProperty("lower").GetDouble(), 1e-9, "lower band of the mean NIS (dimensionless)");
            AssertNear.Equal(ChiSquared.InvCDF(200, 0.975) / 100, band.GetProperty("upper").GetDouble(), 1e-9, "upper band of the mean NIS (dimensionless)");
        }

        // A window inside the band (mean 2.0) ends the run; 300 s of data after the alert was last raised, it resolves.
        for (int i = 300; i < 599; i++)
        {
            feed.Feed(feed.Fix(i), RuleFeed.Accepted(nis: 2.0, dimension: 2));
        }

        Assert.DoesNotContain(feed.Take(), o => o.Resolve);
        feed.Feed(feed.Fix(599), RuleFeed.Accepted(nis: 2.0, dimension: 2));
        Assert.True(feed.Take()[^1].Resolve);
    }

    [Fact]
    public void A_sensor_still_flagged_keeps_the_alert_open_past_clear_s()
    {
        var feed = new RuleFeed(new InconsistentSensorAlert(), NisOnly with { InconsistentSensor = NisOnly.InconsistentSensor with { Sensors = ["gnss_position"] } });
        for (int i = 0; i < 300; i++)
        {
            feed.Feed(feed.Fix(i), RuleFeed.Accepted(nis: 4.0, dimension: 2));
        }

        // The fixes stop; IMU samples (not judged) move data time 20 minutes on: nothing cleared the flag.
        for (int i = 300; i < 1500; i++)
        {
            feed.Feed(feed.Imu(i), RuleFeed.Accepted(nis: 1.0, dimension: 2));
        }

        Assert.DoesNotContain(feed.Take(), o => o.Resolve);
    }

    [Fact]
    public void Replayed_recovered_and_too_pessimistic_outcomes_are_left_out_by_default()
    {
        var feed = new RuleFeed(new InconsistentSensorAlert(), NisOnly);
        for (int i = 0; i < 300; i++)
        {
            feed.Feed(feed.Fix(i), RuleFeed.Accepted(nis: 4.0, dimension: 2), isReplay: true);
            feed.Feed(feed.Velocity(i), RuleFeed.Accepted(nis: 4.0, dimension: 2) with { Recovered = true });
            feed.Feed(feed.Wheel(i), RuleFeed.Accepted(nis: 0.03, dimension: 1));
        }

        Assert.Empty(feed.Take());
    }
}
