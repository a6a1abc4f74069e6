using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Scenarios;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Accuracy;

/// <summary>Horizontal error of a filter position against a scenario's truth, compared through latitude and longitude.</summary>
internal static class TruthError
{
    /// <summary>Squared horizontal distance, m², between the plane point (east, north) and the truth state.</summary>
    public static double HorizontalSq(ScenarioRun run, in LocalTangentPlane plane, double east, double north, in StateVector truth)
    {
        GeodeticPoint p = plane.ToGeodetic(new EnuPoint(east, north, -((east * east) + (north * north)) / (2 * Wgs84.SemiMajorAxisM)));
        run.Truth.ToLocalM(p.LatitudeDeg, p.LongitudeDeg, out double e, out double n);
        return Sq(e - truth[EastM]) + Sq(n - truth[NorthM]);
    }

    /// <summary>x².</summary>
    public static double Sq(double x) => x * x;
}
