// track_reset on its own (definition: TrackResetRule).
using System.Text.Json;
using FusionService.Alerts;
using FusionService.Alerts.Rules;
using FusionService.Estimation.Tracking;

namespace FusionService.Tests.Alerts.Rules;

/// <summary>Expected behaviour from <see cref="TrackResetRule"/> (default clear_s 600, a design choice) and <see cref="AlertKinds.SeverityOf"/>.</summary>
public sealed class TrackResetAlertTests
{
    private static readonly MeasurementOutcome Reset = new(OutcomeKind.TrackReset, 250, 2, 13.8, false, 480);

    [Fact]
    public void Resets_count_once_each_resolve_after_clear_s_and_a_later_one_starts_afresh()
    {
        var feed = new RuleFeed(new TrackResetAlert());
        var first = feed.Fix(0);
        feed.Feed(first, Reset);
        feed.Feed(first, Reset);
        var opened = Assert.Single(feed.Take());
        Assert.Equal(("critical", 1), (opened.Severity, opened.Count));
        Assert.Equal("The track was re-initialised at a new position (a jump or a relocation)", opened.Summary);
        using (var details = JsonDocument.Parse(opened.DetailsJson))
        {
            Assert.Equal(480, details.RootElement.GetProperty("position_shift_m").GetDouble());
        }

        feed.Feed(feed.Fix(100), Reset);
        var second = feed.Take()[^1];
        Assert.Equal((2, "The track was re-initialised 2 times"), (second.Count, second.Summary));
        Assert.Equal(RuleFeed.At(0), second.StartedAt.ToUnixTimeMilliseconds() * 1000);

        feed.Feed(feed.Fix(699), RuleFeed.Accepted(1, 2));
        Assert.DoesNotContain(feed.Take(), o => o.Resolve);
        feed.Feed(feed.Fix(700), RuleFeed.Accepted(1, 2));
        Assert.True(feed.Take()[^1].Resolve);

        feed.Feed(feed.Fix(800), Reset);
        var again = feed.Take()[^1];
        Assert.Equal((false, 1), (again.Resolve, again.Count));
    }
}
