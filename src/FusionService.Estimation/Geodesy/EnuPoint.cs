namespace FusionService.Estimation.Geodesy;

/// <summary>Coordinates in a local East-North-Up frame (see <see cref="LocalTangentPlane"/>).</summary>
/// <param name="EastM">East, metres.</param>
/// <param name="NorthM">North, metres.</param>
/// <param name="UpM">Up along the anchor's ellipsoid normal, metres; default 0.</param>
public readonly record struct EnuPoint(double EastM, double NorthM, double UpM = 0);
