// The 95 % horizontal error ellipse of a position estimate.
namespace FusionService.Vehicles;

/// <summary>Horizontal error ellipse containing the true position with probability 0.95 for a Gaussian error.</summary>
/// <param name="SemiMajorM">Semi-major axis, metres.</param>
/// <param name="SemiMinorM">Semi-minor axis, metres.</param>
/// <param name="OrientationDeg">Direction of the major axis, degrees clockwise from north, in (-90, 90].</param>
public sealed record ErrorEllipseResponse(double SemiMajorM, double SemiMinorM, double OrientationDeg);
