// The whiteness test in the diagnostics: white innovations on model-consistent data, correlated ones (and a sensor
// that is not "consistent") when the GNSS error is a first-order Gauss-Markov process (issue 12).
using System.Globalization;
using System.Text.Json;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Scenarios;
using FusionService.Tests.Infrastructure;
using MathNet.Numerics.Distributions;

namespace FusionService.Tests.Audit;

[Collection(ServiceTests.Name)]
public sealed class WhitenessDiagnosticsTests(ServiceFixture fixture)
{
    /// <summary>
    /// An invented drive of two laps round a block (about 2.6 km), white GNSS noise stated truthfully: the GNSS position
    /// innovations are white; the same truth with a Gauss-Markov error (sigma 4 m, tau 45 s) added to every fix, the stated accuracy
    /// raised to the total sigma 5 m so that the size of the error is stated right, must be judged correlated, and the
    /// sensor not consistent.
    /// </summary>
    [Theory]
    [InlineData(false, "white")]
    [InlineData(true, "correlated")]
    public async Task Issue12_gnss_whiteness_on_scenario_data(bool gaussMarkov, string expected)
    {
        var fleet = await fixture.NewFleetAsync();
        string vehicle = gaussMarkov ? "van-gm" : "van-white";
        long startUs = TelemetryDrive.StartUs(TimeSpan.FromMinutes(30));
        var truth = RouteDriver.Drive(
            [
                new RouteWaypoint(0, 0), new RouteWaypoint(400, 0), new RouteWaypoint(400, 300), new RouteWaypoint(0, 300),
                new RouteWaypoint(0, 20), new RouteWaypoint(380, 20), new RouteWaypoint(380, 280), new RouteWaypoint(20, 280),
            ],
            new RouteDriverOptions { StartTimeUs = startUs },
            seed: 1201);
        var run = MeasurementGenerator.Generate(truth, SensorSuite.ForProfile(NoiseProfile.DeliveryVan), seed: 1202);
        var measurements = gaussMarkov ? GaussMarkovGnssError.Add(run.Measurements, sigmaM: 4.0, seed: 1203) : [.. run.Measurements];
        var messages = ScenarioTelemetry.Messages(vehicle, measurements);
        await ScenarioTelemetry.IngestAsync(fixture, fixture.Client(fleet.IngestKey), messages.Select(m => m.Message));

        var body = await DiagnosticsTests.GetOkAsync(fixture.Client(fleet.ReadKey),
            $"/v1/vehicles/{vehicle}/diagnostics?from={(startUs / 1000) - 1000}&to={(startUs / 1000) + 600_000}");
        var gnss = body.GetProperty("sensors")[0];
        Assert.Equal("gnss_position", gnss.GetProperty("sensor").GetString());
        var whiteness = gnss.GetProperty("whiteness");
        Assert.Equal(10, whiteness.GetProperty("lags").GetInt32());
        var components = whiteness.GetProperty("components");
        Assert.Equal(["east", "north"], components.EnumerateArray().Select(c => c.GetProperty("component").GetString()));
        foreach (var c in components.EnumerateArray())
        {
            long n = c.GetProperty("samples").GetInt64();
            Assert.True(n >= 150, $"only {n} fixes tested");
            // Band 1.96/sqrt(N) (Mehra 1970; check-values.md section 10, derived) and the Bonferroni critical value of
            // two components, chi-square 0.975 quantile with 10 dof from MathNet (a general-purpose reference library).
            AssertNear.Equal(1.959964 / Math.Sqrt(n), c.GetProperty("band").GetDouble(), 1e-6, "band half-width");
            AssertNear.Equal(ChiSquared.InvCDF(10, 0.975), c.GetProperty("critical_value").GetDouble(), 1e-9, "critical value, 10 dof, 0.025");
            Assert.Equal(10, c.GetProperty("autocorrelation").GetArrayLength());
            AssertNear.Equal(c.GetProperty("autocorrelation")[0].GetDouble(), c.GetProperty("lag1").GetDouble(), 0, "lag1 is r(1)");
        }

        string Describe() => string.Join("; ", components.EnumerateArray().Select(c => string.Create(CultureInfo.InvariantCulture,
            $"{c.GetProperty("component")}: r1 {c.GetProperty("lag1").GetDouble():F3}, Q {c.GetProperty("ljung_box_q").GetDouble():F1} vs {c.GetProperty("critical_value").GetDouble():F1}")));
        Assert.True(expected == whiteness.GetProperty("verdict").GetString(), $"whiteness {whiteness.GetProperty("verdict")}, expected {expected}: {Describe()}");
        if (gaussMarkov)
        {
            Assert.NotEqual("consistent", gnss.GetProperty("verdict").GetString());
            if (gnss.GetProperty("nis_verdict").GetString() == "consistent")
            {
                Assert.Equal("correlated", gnss.GetProperty("verdict").GetString());
            }
        }
        else
        {
            Assert.Equal(gnss.GetProperty("nis_verdict").GetString(), gnss.GetProperty("verdict").GetString());
        }
    }
}
