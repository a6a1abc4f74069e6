// One straight line or circular arc of a RoutePath.
namespace FusionService.Scenarios;

/// <summary>A straight line (<see cref="Sign"/> = 0) or a circular arc (sign +1 left, -1 right) of a <see cref="RoutePath"/>.</summary>
internal readonly record struct PathSegment(
    double StartStationM,
    double LengthM,
    double StartEastM,
    double StartNorthM,
    double StartHeadingRad,
    int Sign,
    double RadiusM,
    double CenterEastM,
    double CenterNorthM,
    int LegIndex,
    int CornerIndex)
{
    /// <summary>Signed curvature, 1/m (positive for a left turn).</summary>
    public double CurvaturePerM => Sign == 0 ? 0.0 : Sign / RadiusM;

    public static PathSegment Line(double startStationM, double lengthM, double eastM, double northM, double headingRad, int legIndex) =>
        new(startStationM, lengthM, eastM, northM, headingRad, 0, 0.0, 0.0, 0.0, legIndex, -1);

    public static PathSegment Arc(
        double startStationM, double lengthM, double eastM, double northM, double headingRad, int sign, double radiusM, int cornerIndex)
    {
        // Centre lies to the left of the start heading for a left turn and to the right for a right turn.
        double centerEastM = eastM - (sign * radiusM * Math.Sin(headingRad));
        double centerNorthM = northM + (sign * radiusM * Math.Cos(headingRad));
        return new(startStationM, lengthM, eastM, northM, headingRad, sign, radiusM, centerEastM, centerNorthM, cornerIndex - 1, cornerIndex);
    }
}
