// Smoothed against filtered against raw on a drive with known truth; distance four ways; every output format parsed back.
using System.Globalization;
using System.Text.Json;
using System.Xml;
using System.Xml.Linq;
using FusionService.Tests.Infrastructure;
using Microsoft.VisualBasic.FileIO;
using Xunit.Abstractions;

namespace FusionService.Tests.History;

[Collection(ServiceTests.Name)]
public sealed class TrackHistoryTests(ServiceFixture fixture, ITestOutputHelper output)
{
    private const string Vehicle = "van-hist";
    private static readonly XNamespace Gpx = "http://www.topografix.com/GPX/1/1";
    private static readonly SemaphoreSlim Gate = new(1, 1);
    private static (TestFleet Fleet, HistoryDrive Drive)? _shared;

    private async Task<(TestFleet Fleet, HistoryDrive Drive)> SharedAsync()
    {
        await Gate.WaitAsync();
        try
        {
            if (_shared is null)
            {
                var fleet = await fixture.NewFleetAsync();
                var drive = HistoryDrive.Create(Vehicle, seed: 6100);
                await drive.IngestAsync(fixture, fleet);
                _shared = (fleet, drive);
            }

            return _shared.Value;
        }
        finally
        {
            Gate.Release();
        }
    }

    [Fact]
    public async Task Smoothed_track_is_closer_to_the_truth_than_the_filtered_and_raw_tracks()
    {
        var (fleet, drive) = await SharedAsync();
        using var read = fixture.Client(fleet.ReadKey);
        long from = drive.StartUs, to = drive.EndUs + 1_000_000;
        var smoothed = (await HistoryDrive.TrackJsonAsync(read, Vehicle, from, to, "smoothed")).GetProperty("points");
        var filtered = (await HistoryDrive.TrackJsonAsync(read, Vehicle, from, to, "filtered")).GetProperty("points");
        var raw = (await HistoryDrive.TrackJsonAsync(read, Vehicle, from, to, "raw")).GetProperty("points");
        double Rmse(JsonElement points, out int n)
        {
            double sum = 0;
            n = 0;
            foreach (var p in points.EnumerateArray())
            {
                long t = TimeUs(p.GetProperty("time").GetString()!);
                double e = drive.ErrorM(t, p.GetProperty("lat_deg").GetDouble(), p.GetProperty("lon_deg").GetDouble());
                sum += e * e;
                n++;
            }

            return Math.Sqrt(sum / n);
        }

        double rmseSmoothed = Rmse(smoothed, out int ns), rmseFiltered = Rmse(filtered, out int nf), rmseRaw = Rmse(raw, out int nr);
        output.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"horizontal RMSE against the truth over {(to - from) / 1e6:F0} s: raw GNSS {rmseRaw:F2} m ({nr} fixes), filtered {rmseFiltered:F2} m ({nf} states), smoothed {rmseSmoothed:F2} m ({ns} states)"));
        Assert.True(ns > 0.9 * (to - from) / 1e6, $"only {ns} smoothed points for {(to - from) / 1e6} s at 1 s spacing");
        Assert.True(rmseSmoothed < rmseFiltered, $"smoothed {rmseSmoothed} m not below filtered {rmseFiltered} m");
        Assert.True(rmseFiltered < rmseRaw, $"filtered {rmseFiltered} m not below raw {rmseRaw} m");
        foreach (var p in smoothed.EnumerateArray())
        {
            double heading = p.GetProperty("heading_deg").GetDouble();
            Assert.InRange(heading, 0, 360 - 1e-12);
            var ellipse = p.GetProperty("ellipse95");
            Assert.True(ellipse.GetProperty("semi_major_m").GetDouble() >= ellipse.GetProperty("semi_minor_m").GetDouble());
            Assert.True(ellipse.GetProperty("semi_minor_m").GetDouble() > 0);
            Assert.False(p.TryGetProperty("outcome", out _));
        }

        foreach (var p in raw.EnumerateArray())
        {
            Assert.Contains(p.GetProperty("outcome").GetString(), new[] { "accepted", "gated", "initialising", "before_start", "unused" });
            Assert.True(p.GetProperty("accuracy_m").GetDouble() > 0);
        }

        Assert.Contains(raw.EnumerateArray(), p => p.GetProperty("outcome").GetString() == "gated" && p.GetProperty("nis").GetDouble() > 16.0);
    }

    [Fact]
    public async Task Smoothed_distance_is_within_half_a_percent_of_the_truth_and_the_raw_polyline_is_not()
    {
        var (fleet, drive) = await SharedAsync();
        using var read = fixture.Client(fleet.ReadKey);
        long from = drive.StartUs + 10_000_000, to = drive.EndUs;
        var d = await HistoryDrive.DistanceAsync(read, Vehicle, from, to);
        double truth = drive.TrueDistanceM(from, to);
        double smoothed = d.GetProperty("smoothed_m").GetDouble(), sd = d.GetProperty("smoothed_sd_m").GetDouble();
        double raw = d.GetProperty("raw_polyline_m").GetDouble(), wheel = d.GetProperty("wheel_m").GetDouble();
        double stationary = d.GetProperty("stationary_s").GetDouble();
        double stopped = drive.Run.Truth.StopIntervals.Sum(s => Math.Max(0, (Math.Min(s.EndTimeUs, to) - Math.Max(s.StartTimeUs, from)) / 1e6));
        output.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"truth {truth:F1} m; smoothed {smoothed:F1} ± {sd:F2} m ({100 * (smoothed - truth) / truth:+0.00;-0.00} %); raw polyline {raw:F1} m ({100 * (raw - truth) / truth:+0.0;-0.0} %); "
            + $"wheel / scale {wheel:F1} m ({100 * (wheel - truth) / truth:+0.00;-0.00} %); stationary {stationary:F1} s (truth stops {stopped:F1} s)"));

        // The service's goal for distance: within 0.5 % of the true path length (invented requirement of this project).
        AssertNear.Equal(truth, smoothed, 0.005 * truth, "smoothed distance (m)");
        Assert.Equal(0.0, d.GetProperty("carried_m").GetDouble());
        Assert.Equal(smoothed, d.GetProperty("driven_m").GetDouble());
        Assert.True(Math.Abs(raw - truth) > 0.005 * truth, $"raw polyline {raw} m unexpectedly within 0.5 % of {truth} m");

        // The raw polyline goes through every fix sent in the window, in time order (lengths by Vincenty's inverse
        // formula, the core's own PolylineLength; 1 mm of tolerance for the order of the sums).
        var polyline = new FusionService.Estimation.Diagnostics.PolylineLength();
        foreach (var fix in drive.Drive.Messages.SelectMany(m => m.Core)
            .Where(m => m.Kind == FusionService.Estimation.Measurements.SensorKind.GnssPosition && m.TimeUs >= from && m.TimeUs < to)
            .OrderBy(m => m.TimeUs))
        {
            polyline.Add(fix.Value0, fix.Value1);
        }

        AssertNear.Equal(polyline.LengthM, raw, 1e-3, "raw polyline through the fixes sent (m)");
        Assert.True(sd > 0 && sd < 0.01 * truth, $"distance sd {sd} m");
        Assert.True(stationary > 0.5 * stopped, $"stationary {stationary} s of {stopped} s stopped");
        Assert.Equal(HistoryDrive.Time(from), d.GetProperty("from").GetString());
        Assert.Contains("not for safety-critical", d.GetProperty("caution").GetString(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task GeoJson_follows_the_RFC_7946_structure_with_lon_lat_positions()
    {
        var (fleet, drive) = await SharedAsync();
        using var read = fixture.Client(fleet.ReadKey);
        long from = drive.StartUs, to = drive.EndUs;
        var reference = (await HistoryDrive.TrackJsonAsync(read, Vehicle, from, to, "raw", "&step=5")).GetProperty("points").EnumerateArray().ToList();
        using var response = await read.GetAsync($"/v1/vehicles/{Vehicle}/track?from={HistoryDrive.Time(from)}&to={HistoryDrive.Time(to)}&kind=raw&step=5&format=geojson");
        Assert.Equal("application/geo+json", response.Content.Headers.ContentType?.MediaType);
        using var doc = JsonDocument.Parse(await response.Content.ReadAsStringAsync());

        // RFC 7946 sections 3.3 (FeatureCollection), 3.2 (Feature), 3.1.2 / 3.1.4 (Point, LineString), 3.1.1 (position
        // = [longitude, latitude]), 4 (WGS 84 degrees) - published.
        var root = doc.RootElement;
        Assert.Equal("FeatureCollection", root.GetProperty("type").GetString());
        var features = root.GetProperty("features").EnumerateArray().ToList();
        var points = features.Where(f => f.GetProperty("geometry").GetProperty("type").GetString() == "Point").ToList();
        var lines = features.Where(f => f.GetProperty("geometry").GetProperty("type").GetString() == "LineString").ToList();
        Assert.Equal(features.Count, points.Count + lines.Count);
        Assert.Single(lines);
        Assert.Equal(reference.Count, points.Count);
        foreach (var f in features)
        {
            Assert.Equal("Feature", f.GetProperty("type").GetString());
            Assert.Equal(JsonValueKind.Object, f.GetProperty("properties").ValueKind);
        }

        for (int i = 0; i < points.Count; i++)
        {
            var c = points[i].GetProperty("geometry").GetProperty("coordinates");
            Assert.Equal(2, c.GetArrayLength());
            AssertLonLat(c);
            Assert.Equal(reference[i].GetProperty("lon_deg").GetDouble(), c[0].GetDouble());
            Assert.Equal(reference[i].GetProperty("lat_deg").GetDouble(), c[1].GetDouble());
            Assert.Equal(reference[i].GetProperty("time").GetString(), points[i].GetProperty("properties").GetProperty("time").GetString());
            Assert.Equal(reference[i].GetProperty("outcome").GetString(), points[i].GetProperty("properties").GetProperty("outcome").GetString());
        }

        var line = lines[0].GetProperty("geometry").GetProperty("coordinates").EnumerateArray().ToList();
        Assert.Equal(points.Count, line.Count);
        Assert.True(line.Count >= 2);
        line.ForEach(AssertLonLat);
        Assert.Equal(Vehicle, lines[0].GetProperty("properties").GetProperty("vehicle").GetString());
    }

    [Fact]
    public async Task Gpx_is_well_formed_GPX_1_1_in_schema_order()
    {
        var (fleet, drive) = await SharedAsync();
        using var read = fixture.Client(fleet.ReadKey);
        long from = drive.StartUs, to = drive.EndUs;
        var reference = (await HistoryDrive.TrackJsonAsync(read, Vehicle, from, to, "smoothed", "&step=2")).GetProperty("points").EnumerateArray().ToList();
        using var request = new HttpRequestMessage(HttpMethod.Get, $"/v1/vehicles/{Vehicle}/track?from={HistoryDrive.Time(from)}&to={HistoryDrive.Time(to)}&step=2");
        request.Headers.Accept.ParseAdd("application/gpx+xml");
        using var response = await read.SendAsync(request);
        Assert.Equal("application/gpx+xml", response.Content.Headers.ContentType?.MediaType);
        byte[] body = await response.Content.ReadAsByteArrayAsync();

        // Well-formed XML through XmlReader (throws on any error), then the GPX 1.1 structure: root gpx in namespace
        // http://www.topografix.com/GPX/1/1 with version="1.1" and creator; children metadata?, wpt*, rte*, trk*, extensions?;
        // trkType: name, cmt, desc, src, link*, number, type, extensions, trkseg*; wptType: ele, time, ..., extensions;
        // lat in [-90, 90], lon in [-180, 180) (GPX 1.1 schema, gpx.xsd, element order and ranges from memory).
        using (var reader = XmlReader.Create(new MemoryStream(body), new XmlReaderSettings { DtdProcessing = DtdProcessing.Prohibit }))
        {
            while (reader.Read())
            {
            }
        }

        var doc = XDocument.Load(new MemoryStream(body));
        var gpx = doc.Root!;
        Assert.Equal(Gpx + "gpx", gpx.Name);
        Assert.Equal("1.1", gpx.Attribute("version")?.Value);
        Assert.Equal("FusionService", gpx.Attribute("creator")?.Value);
        AssertOrder(gpx.Elements().Select(e => e.Name.LocalName), ["metadata", "wpt", "rte", "trk", "extensions"]);
        Assert.All(gpx.Elements(), e => Assert.Equal(Gpx, e.Name.Namespace));
        AssertOrder(gpx.Element(Gpx + "metadata")!.Elements().Select(e => e.Name.LocalName), ["name", "desc", "author", "copyright", "link", "time", "keywords", "bounds", "extensions"]);
        var trk = Assert.Single(gpx.Elements(Gpx + "trk"));
        AssertOrder(trk.Elements().Select(e => e.Name.LocalName), ["name", "cmt", "desc", "src", "link", "number", "type", "extensions", "trkseg"]);
        var trkpts = trk.Elements(Gpx + "trkseg").SelectMany(s => s.Elements()).ToList();
        Assert.All(trkpts, p => Assert.Equal(Gpx + "trkpt", p.Name));
        Assert.Equal(reference.Count, trkpts.Count);
        for (int i = 0; i < trkpts.Count; i++)
        {
            var p = trkpts[i];
            double lat = double.Parse(p.Attribute("lat")!.Value, NumberStyles.Float, CultureInfo.InvariantCulture);
            double lon = double.Parse(p.Attribute("lon")!.Value, NumberStyles.Float, CultureInfo.InvariantCulture);
            Assert.InRange(lat, -90, 90);
            Assert.True(lon >= -180 && lon < 180, $"lon {lon}");
            Assert.DoesNotContain('E', p.Attribute("lat")!.Value);
            AssertOrder(p.Elements().Select(e => e.Name.LocalName), ["ele", "time", "magvar", "geoidheight", "name", "cmt", "desc", "src", "link", "sym", "type", "fix", "sat", "hdop", "vdop", "pdop", "ageofdgpsdata", "dgpsid", "extensions"]);
            Assert.Equal(reference[i].GetProperty("time").GetString(), p.Element(Gpx + "time")!.Value);

            // 1e-9 degrees of latitude is about 0.1 mm: the GPX decimals keep nine places.
            AssertNear.Equal(reference[i].GetProperty("lat_deg").GetDouble(), lat, 5e-10, "GPX latitude (deg)");
            var extensions = p.Element(Gpx + "extensions")!;
            Assert.All(extensions.Elements(), e => Assert.NotEqual(Gpx, e.Name.Namespace));
            Assert.Equal(
                reference[i].GetProperty("speed_mps").GetDouble(),
                double.Parse(extensions.Elements().Single(e => e.Name.LocalName == "speed_mps").Value, CultureInfo.InvariantCulture));
        }
    }

    [Fact]
    public async Task Csv_round_trips_through_an_RFC_4180_parser()
    {
        var (fleet, drive) = await SharedAsync();
        using var read = fixture.Client(fleet.ReadKey);
        long from = drive.StartUs, to = drive.EndUs;
        var reference = (await HistoryDrive.TrackJsonAsync(read, Vehicle, from, to, "raw")).GetProperty("points").EnumerateArray().ToList();
        using var request = new HttpRequestMessage(HttpMethod.Get, $"/v1/vehicles/{Vehicle}/track?from={HistoryDrive.Time(from)}&to={HistoryDrive.Time(to)}&kind=raw&format=csv");
        request.Headers.Accept.ParseAdd("application/json");
        using var response = await read.SendAsync(request);
        Assert.Equal("text/csv", response.Content.Headers.ContentType?.MediaType);
        string text = await response.Content.ReadAsStringAsync();
        Assert.Contains("\r\n", text, StringComparison.Ordinal);

        // Microsoft.VisualBasic.FileIO.TextFieldParser: a general-purpose parser of delimited text with quoted fields.
        using var parser = new TextFieldParser(new StringReader(text)) { TextFieldType = FieldType.Delimited, HasFieldsEnclosedInQuotes = true };
        parser.SetDelimiters(",");
        string[] header = parser.ReadFields()!;
        Assert.Equal(
            ["time", "lat_deg", "lon_deg", "heading_deg", "speed_mps", "ellipse95_semi_major_m", "ellipse95_semi_minor_m", "ellipse95_orientation_deg", "outcome", "nis", "accuracy_m", "track_reset"],
            header);
        var rows = new List<string[]>();
        while (!parser.EndOfData)
        {
            rows.Add(parser.ReadFields()!);
        }

        Assert.Equal(reference.Count, rows.Count);
        for (int i = 0; i < rows.Count; i++)
        {
            var json = reference[i];
            var row = rows[i];
            Assert.Equal(header.Length, row.Length);
            Assert.Equal(json.GetProperty("time").GetString(), row[0]);
            Assert.Equal(json.GetProperty("lat_deg").GetDouble(), double.Parse(row[1], CultureInfo.InvariantCulture));
            Assert.Equal(json.GetProperty("lon_deg").GetDouble(), double.Parse(row[2], CultureInfo.InvariantCulture));
            Assert.Equal(json.TryGetProperty("speed_mps", out var v) ? v.GetDouble().ToString("R", CultureInfo.InvariantCulture) : string.Empty, row[4]);
            Assert.Equal(json.GetProperty("ellipse95").GetProperty("semi_major_m").GetDouble(), double.Parse(row[5], CultureInfo.InvariantCulture));
            Assert.Equal(json.GetProperty("outcome").GetString(), row[8]);
            Assert.Equal(json.TryGetProperty("nis", out var nis) ? nis.GetDouble().ToString("R", CultureInfo.InvariantCulture) : string.Empty, row[9]);
            Assert.Equal(json.GetProperty("accuracy_m").GetDouble(), double.Parse(row[10], CultureInfo.InvariantCulture));
        }
    }

    [Fact]
    public async Task Json_document_has_the_contract_fields_and_step_decimates()
    {
        var (fleet, drive) = await SharedAsync();
        using var read = fixture.Client(fleet.ReadKey);
        long from = drive.StartUs + 60_000_000, to = from + 120_000_000;
        var all = await HistoryDrive.TrackJsonAsync(read, Vehicle, from, to, "filtered");
        var decimated = await HistoryDrive.TrackJsonAsync(read, Vehicle, from, to, "filtered", "&step=10");
        Assert.Equal(Vehicle, all.GetProperty("vehicle").GetString());
        Assert.Equal("filtered", all.GetProperty("kind").GetString());
        Assert.Equal(HistoryDrive.Time(from), all.GetProperty("from").GetString());
        Assert.Equal(HistoryDrive.Time(to), all.GetProperty("to").GetString());
        Assert.Contains("Estimates", all.GetProperty("caution").GetString(), StringComparison.Ordinal);
        var times = decimated.GetProperty("points").EnumerateArray().Select(p => TimeUs(p.GetProperty("time").GetString()!)).ToList();
        Assert.InRange(times.Count, 11, 13);
        Assert.True(all.GetProperty("points").GetArrayLength() >= 100);
        for (int i = 1; i < times.Count; i++)
        {
            Assert.True(times[i] - times[i - 1] >= 10_000_000);
        }

        Assert.All(all.GetProperty("points").EnumerateArray(), p =>
        {
            long t = TimeUs(p.GetProperty("time").GetString()!);
            Assert.InRange(t, from, to - 1);
        });
    }

    internal static long TimeUs(string rfc3339) =>
        (DateTimeOffset.Parse(rfc3339, CultureInfo.InvariantCulture).UtcTicks - DateTime.UnixEpoch.Ticks) / 10;

    private static void AssertLonLat(JsonElement position)
    {
        double lon = position[0].GetDouble(), lat = position[1].GetDouble();
        Assert.InRange(lon, -180, 180);
        Assert.InRange(lat, -90, 90);
    }

    /// <summary>The names appear in the order of <paramref name="schemaOrder"/> (repeats allowed, unknown names fail).</summary>
    private static void AssertOrder(IEnumerable<string> names, string[] schemaOrder)
    {
        int last = -1;
        foreach (string name in names)
        {
            int index = Array.IndexOf(schemaOrder, name);
            Assert.True(index >= 0, $"element {name} is not allowed here");
            Assert.True(index >= last, $"element {name} out of schema order");
            last = index;
        }
    }
}
