// A first-order Gauss-Markov error added to invented GNSS fixes, for the whiteness tests (issue 12).
using FusionService.Estimation.Measurements;

namespace FusionService.Tests.Infrastructure;

/// <summary>
/// Adds to every GNSS position a first-order Gauss-Markov error per axis, x(k+1) = phi x(k) + sqrt(q) n(k) with
/// phi = exp(-dt/tau) and q = sigma² (1 - phi²) (Brown and Hwang 2012; check-values.md section 10, derived), started in
/// its stationary distribution, and states the total 1-sigma accuracy sqrt(stated² + sigma²).
/// </summary>
internal static class GaussMarkovGnssError
{
    /// <summary>check-values.md section 10: tau = 45 s at dt = 1 s gives phi = 0.978023 (derived).</summary>
    public const double Phi45sAt1Hz = 0.978023;

    /// <summary>The measurements with the error added to each GNSS position (one step of phi per fix).</summary>
    public static List<Measurement> Add(IEnumerable<Measurement> all, double sigmaM, int seed, double phi = Phi45sAt1Hz)
    {
        var random = new Random(seed);
        double Gauss() => Math.Sqrt(-2 * Math.Log(1 - random.NextDouble())) * Math.Cos(2 * Math.PI * random.NextDouble());
        double east = sigmaM * Gauss(), north = sigmaM * Gauss(), drive = sigmaM * Math.Sqrt(1 - (phi * phi));
        var list = new List<Measurement>();
        bool first = true;
        foreach (var m in all)
        {
            if (m.Kind != SensorKind.GnssPosition)
            {
                list.Add(m);
                continue;
            }

            if (!first)
            {
                east = (phi * east) + (drive * Gauss());
                north = (phi * north) + (drive * Gauss());
            }

            first = false;
            double latDeg = m.Value0 + (north / 111_132.0);
            double lonDeg = m.Value1 + (east / (111_320.0 * Math.Cos(m.Value0 * Math.PI / 180)));
            double total = Math.Sqrt((m.Value2 * m.Value2) + (sigmaM * sigmaM));
            list.Add(Measurement.GnssPosition(m.TimeUs, m.MessageKey, latDeg, lonDeg, total));
        }

        return list;
    }
}
