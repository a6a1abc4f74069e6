// A fix whose accuracy is HDOP × the configured UERE says so to the filter (issue 12: the receiver error fit leaves
// such fixes out, since their scale is the UERE's assumption, not the receiver's statement).
using System.Text.Json;
using FusionService.Estimation.Measurements;
using FusionService.Ingest;

namespace FusionService.Tests.Ingest;

public sealed class HdopAccuracyTests
{
    private static readonly TelemetryMessageParser Parser = new(new IngestOptions { HdopUereM = 5.0 }, 0, long.MaxValue);

    private static GnssFixView Fix(string json)
    {
        using var document = JsonDocument.Parse(json);
        ParsedMessage? parsed = Parser.Parse(document.RootElement, out MessageRejection? rejection);
        Assert.Null(rejection);
        return Assert.Single(parsed!.Measurements, m => m.Kind == SensorKind.GnssPosition).AsGnssFix();
    }

    [Fact]
    public void Issue12_an_accuracy_from_hdop_is_marked_and_a_stated_one_is_not()
    {
        // HDOP × UERE is the horizontal DRMS (Misra and Enge, 2nd ed., ch. 6; from memory), √2 times the per-axis
        // sigma: 1.2 × 5 m / √2 = 4.2426 m (derived).
        GnssFixView fromHdop = Fix("""{"vehicle":"v","kind":"gnss","time":1,"lat_deg":46.12,"lon_deg":170.47,"hdop":1.2}""");
        Assert.True(fromHdop.AccuracyFromHdop);
        Assert.Equal(1.2 * 5.0 / Math.Sqrt(2.0), fromHdop.AccuracyM, 1e-5);

        GnssFixView stated = Fix("""{"vehicle":"v","kind":"gnss","time":1,"lat_deg":46.12,"lon_deg":170.47,"accuracy_m":4.2426,"hdop":1.2}""");
        Assert.False(stated.AccuracyFromHdop);
        Assert.Equal(4.2426, stated.AccuracyM, 1e-5);
    }

    [Fact]
    public void Issue12_the_mark_survives_the_stored_form_and_is_not_part_of_the_accuracy()
    {
        var m = Measurement.GnssPosition(1, 7, 46.12, 170.47, 4.25, sigmaFromHdop: true);
        Measurement stored = Measurement.FromStored(m.TimeUs, m.OrderKey, m.Value0, m.Value1, m.Value2);
        Assert.Equal(m, stored);
        Assert.True(stored.AsGnssFix().AccuracyFromHdop);
        Assert.Equal(4.25f, stored.AsGnssFix().AccuracyM);
    }
}
