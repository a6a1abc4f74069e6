// measurement_unusable on its own (definition: AlertKinds.MeasurementUnusable).
using System.Text.Json;
using FusionService.Alerts;
using FusionService.Alerts.Rules;
using FusionService.Estimation.Tracking;

namespace FusionService.Tests.Alerts.Rules;

/// <summary>Expected behaviour from <see cref="AlertKinds.MeasurementUnusable"/>: always on, resolves after 600 s of data (a design choice).</summary>
public sealed class MeasurementUnusableAlertTests
{
    [Fact]
    public void Skipped_measurements_are_counted_with_the_reason_even_with_every_other_rule_off()
    {
        var off = Infrastructure.AlertSettings.AllOff;
        var feed = new RuleFeed(new MeasurementUnusableAlert(), off);
        var poison = feed.Fix(0);
        feed.Feed(poison, MeasurementOutcome.UnusableBecause("innovation covariance not positive definite"));
        feed.Feed(poison, MeasurementOutcome.UnusableBecause("innovation covariance not positive definite"));
        var opened = Assert.Single(feed.Take());
        Assert.Equal(("warning", 1), (opened.Severity, opened.Count));
        Assert.Equal("A gnss_position measurement was skipped: the filter failed numerically on it", opened.Summary);
        using (var details = JsonDocument.Parse(opened.DetailsJson))
        {
            Assert.Equal("innovation covariance not positive definite", details.RootElement.GetProperty("last_reason").GetString());
        }

        feed.Feed(feed.Wheel(10), MeasurementOutcome.UnusableBecause("x"));
        Assert.Equal("2 measurements were skipped: the filter failed numerically on them", feed.Take()[^1].Summary);

        feed.Feed(feed.Fix(609.5), RuleFeed.Accepted(1, 2));
        Assert.DoesNotContain(feed.Take(), o => o.Resolve);
        feed.Feed(feed.Fix(610), RuleFeed.Accepted(1, 2));
        Assert.True(feed.Take()[^1].Resolve);
    }
}
