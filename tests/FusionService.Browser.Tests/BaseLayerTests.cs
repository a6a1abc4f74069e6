// Issue 15: the fleet's own base layer (roads driven, stops) from a posted round, drawn under the vans without tiles.
using System.Text.Json;
using FusionService.Browser.Tests.Infrastructure;
using FusionService.Scenarios;
using OpenQA.Selenium;

namespace FusionService.Browser.Tests;

[Collection(BrowserTests.Name)]
public sealed class BaseLayerTests(DashboardFixture fixture)
{
    [Fact]
    public async Task Issue15_base_layer_learned_from_a_posted_round_follows_its_roads_and_is_drawn_under_the_van()
    {
        var fleet = await fixture.CreateOwnFleetAsync("base-layer");
        var (truth, measurements) = OwnFleet.Round(stops: 5, seed: 4100);
        // The invented round ends two minutes ago, so that it lies in the layer's last day.
        long shiftUs = (DateTimeOffset.UtcNow.ToUnixTimeMilliseconds() * 1000) - 120_000_000 - truth.EndTimeUs;
        var posted = OwnFleet.Shift(measurements, shiftUs);
        await fleet.PostAsync("round-van", posted);
        await fleet.WaitForEstimateAsync("round-van", posted[^1].TimeUs, TimeSpan.FromSeconds(180));
        // The tracks write their estimates in the background: give the writer a moment (its flush interval is well below this).
        await Task.Delay(3000);

        using var layer = await fleet.GetAsync("v1/base-layer?days=1");
        var root = layer.RootElement;
        Assert.Equal("FeatureCollection", root.GetProperty("type").GetString());
        double cellM = root.GetProperty("cell_m").GetDouble();
        var features = root.GetProperty("features").EnumerateArray().ToList();
        var roads = features.Where(f => f.GetProperty("properties").GetProperty("layer").GetString() == "road").Select(Local).ToList();
        var stops = features.Where(f => f.GetProperty("properties").GetProperty("layer").GetString() == "stop").Select(Local).ToList();
        Assert.True(roads.Count > 50, $"only {roads.Count} road cells from a posted round");

        // The truth path every 0.1 s, and the places the van stood.
        var path = truth.Samples.Where((_, i) => i % 10 == 0).ToList();
        var moving = path.Where(s => s.SpeedMps > 3).ToList();
        var standing = path.Where(s => s.SpeedMps < 0.1).ToList();

        // Precision: a road cell's centre lies within half a cell diagonal of an estimate that the endpoint admits only with
        // a 95 % semi-major axis of 15 m or less (BaseLayerEndpoints.MaxEllipseM); 25 m covers both with a margin for the
        // estimate's own error beyond its ellipse in 5 % of cases. Derived from the endpoint's limits, not from a source.
        double reachM = (cellM * Math.Sqrt(2) / 2) + 15 + 3;
        int far = roads.Count(c => path.Min(s => Distance(c, s)) > reachM);
        Assert.True(far <= roads.Count / 20, $"{far} of {roads.Count} road cells lie more than {reachM:0.#} m from the driven path");

        // Coverage: where the van drove faster than 3 m/s, a road cell lies near (at most 5 % of such instants without one).
        // The tracks store an estimate at each 1 Hz GNSS fix, so at the round's top cruise speed of 13.5 m/s
        // (RouteDriverOptions.CruiseSpeedMaxMps) a driven instant lies up to 6.75 m from a stored one; add half a cell
        // diagonal and 10 m for the estimate's own error. Derived from the scenario and the endpoint, not from a source.
        double coverM = (cellM * Math.Sqrt(2) / 2) + (13.5 / 2) + 10;
        int uncovered = moving.Where((_, i) => i % 10 == 0).Count(s => roads.Min(c => Distance(c, s)) > coverM);
        int checkedCount = moving.Where((_, i) => i % 10 == 0).Count();
        Assert.True(uncovered <= checkedCount / 20, $"{uncovered} of {checkedCount} driven instants have no road cell within {coverM:0.#} m");

        // Stops: the round dwells 60-300 s at each of its 5 stops (DeliveryNetwork.PlanRound): at least one stop is found,
        // and every stop found lies where the van stood (within the 40 m stop square's half diagonal plus 15 m).
        Assert.NotEmpty(stops);
        foreach (var stop in stops)
        {
            double nearest = standing.Min(s => Distance(stop, s));
            Assert.True(nearest <= (40 * Math.Sqrt(2) / 2) + 15, $"a stop lies {nearest:0.#} m from anywhere the van stood");
        }

        // The dashboard draws every road cell and stop under the van, to scale.
        var page = new DashboardPage(fixture);
        page.SignIn(fleet.ReadKey);
        DashboardPage.WaitFor(
            () => page.Driver.FindElements(By.CssSelector("#fleet-map g.van[data-vehicle='round-van']")).Count == 1
                && page.Driver.FindElements(By.CssSelector("#fleet-map g.base-layer circle.road-cell")).Count == roads.Count,
            TimeSpan.FromSeconds(60), $"the van and its {roads.Count} road cells on the fleet map");
        string json = (string)page.Script("""
            const svg = document.querySelector('#fleet-map');
            const base = svg.querySelector('g.base-layer');
            const children = [...svg.children].map((c) => c.getAttribute('class'));
            const r = Number(base.querySelector('circle.road-cell').getAttribute('r'));
            const barPx = Number(svg.querySelector('.scale-bar').dataset.lengthPx);
            const barM = Number(svg.querySelector('.scale-bar-label').dataset.lengthM);
            const stops = base.querySelectorAll('g.stop').length;
            const note = document.querySelector('#base-layer-note').textContent;
            return JSON.stringify({ children, r, barPx, barM, stops, cellM: Number(base.dataset.cellM), note });
            """)!;
        using var drawn = JsonDocument.Parse(json);
        var d = drawn.RootElement;
        var order = d.GetProperty("children").EnumerateArray().Select(e => e.GetString()).ToList();
        Assert.True(order.IndexOf("base-layer") < order.IndexOf("layers"), "the base layer must lie under the vans: " + string.Join(", ", order));
        Assert.Equal(stops.Count, d.GetProperty("stops").GetInt32());
        double pxPerM = d.GetProperty("barPx").GetDouble() / d.GetProperty("barM").GetDouble();
        // A cell's disc is 0.7 cell sides in radius to scale, with a floor of 0.75 px (baseLayer.js).
        AssertNear.Equal(Math.Max(0.75, 0.7 * cellM * pxPerM), d.GetProperty("r").GetDouble(), 1e-6, "road cell radius, px");
        Assert.Contains("no map tiles needed", d.GetProperty("note").GetString(), StringComparison.Ordinal);
        page.Screenshot("base-layer");

        (double EastM, double NorthM) Local(JsonElement feature)
        {
            var c = feature.GetProperty("geometry").GetProperty("coordinates");
            truth.ToLocalM(c[1].GetDouble(), c[0].GetDouble(), out double e, out double n);
            return (e, n);
        }
    }

    [Fact]
    public void Issue15_labels_of_vans_standing_together_do_not_overlap()
    {
        var page = new DashboardPage(fixture);
        page.SignIn();
        // Twelve vans on one spot (the depot at the start of a day) and three close by: every label gets a box of its own.
        string json = (string)page.AsyncScript("""
            const done = arguments[arguments.length - 1];
            import('/js/labelPlacement.js').then((m) => {
              const items = [];
              for (let i = 1; i <= 12; i++) items.push({ id: `van-${String(i).padStart(2, '0')}`, x: 300, y: 200, text: `van-${String(i).padStart(2, '0')}` });
              for (let i = 13; i <= 15; i++) items.push({ id: `van-${i}`, x: 300 + (i - 12) * 4, y: 204, text: `van-${i}` });
              done(JSON.stringify(m.placeLabels(items)));
            }).catch((e) => done(JSON.stringify({ error: String(e) })));
            """)!;
        using var doc = JsonDocument.Parse(json);
        Assert.Equal(JsonValueKind.Array, doc.RootElement.ValueKind);
        var boxes = doc.RootElement.EnumerateArray().Select(b => (
            Id: b.GetProperty("id").GetString()!, X: b.GetProperty("x").GetDouble(), Y: b.GetProperty("y").GetDouble(),
            W: b.GetProperty("w").GetDouble(), H: b.GetProperty("h").GetDouble())).ToList();
        Assert.Equal(15, boxes.Count);
        for (int i = 0; i < boxes.Count; i++)
        {
            for (int j = i + 1; j < boxes.Count; j++)
            {
                var (a, b) = (boxes[i], boxes[j]);
                bool overlap = a.X < b.X + b.W && b.X < a.X + a.W && a.Y < b.Y + b.H && b.Y < a.Y + a.H;
                Assert.False(overlap, $"labels {a.Id} and {b.Id} overlap");
            }
        }

        // And on the live fleet map: no two drawn label boxes overlap.
        DashboardPage.WaitFor(() => page.Driver.FindElements(By.CssSelector("#fleet-map g.van-label-box")).Count >= 3,
            TimeSpan.FromSeconds(120), "three van labels on the fleet map");
        string drawn = (string)page.Script("""
            return JSON.stringify([...document.querySelectorAll('#fleet-map g.van-label-box')].map((g) => g.dataset.box.split(' ').map(Number)));
            """)!;
        var live = JsonSerializer.Deserialize<double[][]>(drawn)!;
        for (int i = 0; i < live.Length; i++)
        {
            for (int j = i + 1; j < live.Length; j++)
            {
                var (a, b) = (live[i], live[j]);
                Assert.False(a[0] < b[0] + b[2] && b[0] < a[0] + a[2] && a[1] < b[1] + b[3] && b[1] < a[1] + a[3], $"drawn labels {i} and {j} overlap");
            }
        }
    }

    private static double Distance((double EastM, double NorthM) p, TruthSample s) =>
        Math.Sqrt(((p.EastM - s.EastM) * (p.EastM - s.EastM)) + ((p.NorthM - s.NorthM) * (p.NorthM - s.NorthM)));
}
