// The page's own drawing geometry, run in the browser: the local metric frame, ellipse orientation, NIS band values.
using System.Text.Json;
using FusionService.Browser.Tests.Infrastructure;

namespace FusionService.Browser.Tests;

[Collection(BrowserTests.Name)]
public sealed class LocalFrameTests(DashboardFixture fixture)
{
    private JsonElement RunModule(string module, string body)
    {
        var page = new DashboardPage(fixture);
        page.Driver.Navigate().GoToUrl(fixture.BaseAddress);
        string json = (string)page.AsyncScript(
            "const done = arguments[arguments.length - 1];"
            + $"import('{module}').then((m) => {{ {body} }}).catch((e) => done(JSON.stringify({{ error: String(e) }})));")!;
        var result = JsonDocument.Parse(json).RootElement.Clone();
        Assert.False(result.TryGetProperty("error", out var error), "module failed: " + error);
        return result;
    }

    [Fact]
    public void Frame_distance_matches_the_Geoscience_Australia_Vincenty_test_line()
    {
        // Geoscience Australia worked example (published): -37 57' 03.72030", 144 25' 29.52440" to
        // -37 39' 10.15610", 143 55' 35.38390" is 54972.271 m. The flat frame, centred on the midpoint as the dashboard
        // centres it on the fleet, errs to second order in distance/radius: about (55 km / 6371 km)^2 x 55 km = 4 m; the
        // tolerance is 5 m. (Over a town a few km across the same error is below a millimetre.)
        var r = RunModule("/js/localFrame.js", """
            const lat1 = -(37 + 57 / 60 + 3.72030 / 3600), lon1 = 144 + 25 / 60 + 29.52440 / 3600;
            const lat2 = -(37 + 39 / 60 + 10.15610 / 3600), lon2 = 143 + 55 / 60 + 35.38390 / 3600;
            const f = m.createFrame((lat1 + lat2) / 2, (lon1 + lon2) / 2);
            const a = f.toLocal(lat1, lon1), b = f.toLocal(lat2, lon2);
            const back = f.toGeodetic(b.eastM, b.northM);
            done(JSON.stringify({ d: Math.hypot(b.eastM - a.eastM, b.northM - a.northM), lat: back.latDeg, lon: back.lonDeg, lat2, lon2 }));
            """);
        AssertNear.Equal(54972.271, r.GetProperty("d").GetDouble(), 5.0, "Vincenty test line length in the local frame, m");
        // The inverse returns the input (1e-9 deg is about 0.1 mm).
        AssertNear.Equal(r.GetProperty("lat2").GetDouble(), r.GetProperty("lat").GetDouble(), 1e-9, "latitude after the round trip, deg");
        AssertNear.Equal(r.GetProperty("lon2").GetDouble(), r.GetProperty("lon").GetDouble(), 1e-9, "longitude after the round trip, deg");
    }

    [Theory]
    [InlineData(0.0, 0.0, -1.0)]     // major axis to the north: straight up on the screen (y grows downwards)
    [InlineData(90.0, 1.0, 0.0)]     // to the east: to the right
    [InlineData(45.0, 0.70710678118654757, -0.70710678118654757)] // north-east: up and right
    [InlineData(-30.0, -0.5, -0.86602540378443860)]               // 30 deg west of north: up and a little left
    public void Ellipse_major_axis_points_clockwise_from_north_on_the_screen(double orientationDeg, double x, double y)
    {
        // Derived from the API's definition (orientation_deg clockwise from north) and SVG's axes (x right, y down).
        var r = RunModule("/js/localFrame.js", $"done(JSON.stringify(m.majorAxisScreenDirection({orientationDeg.ToString(System.Globalization.CultureInfo.InvariantCulture)})));");
        AssertNear.Equal(x, r.GetProperty("x").GetDouble(), 1e-12, "screen x of the major axis direction");
        AssertNear.Equal(y, r.GetProperty("y").GetDouble(), 1e-12, "screen y of the major axis direction");
    }

    [Theory]
    [InlineData(1, 3.84146)] // NIST/SEMATECH e-Handbook 1.3.6.7.4, upper tail 0.05 (published)
    [InlineData(2, 5.99146)] // same table (published)
    public void Nis_band_uses_the_published_chi_square_95_percent_values(int dof, double expected)
    {
        var r = RunModule("/js/chiSquare.js", $"done(JSON.stringify({{ v: m.chiSquareUpper95({dof}) }}));");
        AssertNear.Equal(expected, r.GetProperty("v").GetDouble(), 1e-5, $"chi2(0.95; {dof})");
    }
}
