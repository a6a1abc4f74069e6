// A longitude/latitude box for the positions stream.
using System.Globalization;

namespace FusionService.Live;

/// <summary>
/// A WGS-84 box <c>min_lon,min_lat,max_lon,max_lat</c> in degrees (the order of a GeoJSON bbox, RFC 7946 section 5).
/// A box with min_lon greater than max_lon crosses the antimeridian (RFC 7946 section 5.2). Edges are inside.
/// </summary>
/// <param name="MinLonDeg">West edge, degrees in [-180, 180].</param>
/// <param name="MinLatDeg">South edge, degrees in [-90, 90].</param>
/// <param name="MaxLonDeg">East edge, degrees in [-180, 180].</param>
/// <param name="MaxLatDeg">North edge, degrees in [-90, 90], not below the south edge.</param>
public readonly record struct BoundingBox(double MinLonDeg, double MinLatDeg, double MaxLonDeg, double MaxLatDeg)
{
    /// <summary>Parses <paramref name="text"/>; on failure <paramref name="error"/> says why.</summary>
    public static bool TryParse(string text, out BoundingBox box, out string error)
    {
        ArgumentNullException.ThrowIfNull(text);
        box = default;
        var parts = text.Split(',');
        var values = new double[4];
        if (parts.Length != 4)
        {
            error = "bbox: must be four numbers min_lon,min_lat,max_lon,max_lat (degrees)";
            return false;
        }

        for (int i = 0; i < 4; i++)
        {
            if (!double.TryParse(parts[i].Trim(), NumberStyles.Float, CultureInfo.InvariantCulture, out values[i]) || !double.IsFinite(values[i]))
            {
                error = "bbox: value " + (i + 1).ToString(CultureInfo.InvariantCulture) + " is not a number";
                return false;
            }
        }

        if (Math.Abs(values[0]) > 180 || Math.Abs(values[2]) > 180 || Math.Abs(values[1]) > 90 || Math.Abs(values[3]) > 90 || values[1] > values[3])
        {
            error = "bbox: longitudes must lie in [-180, 180], latitudes in [-90, 90] with min_lat <= max_lat";
            return false;
        }

        box = new BoundingBox(values[0], values[1], values[2], values[3]);
        error = string.Empty;
        return true;
    }

    /// <summary>Whether the point lies inside (edges included).</summary>
    public bool Contains(double latDeg, double lonDeg) =>
        latDeg >= MinLatDeg && latDeg <= MaxLatDeg
        && (MinLonDeg <= MaxLonDeg ? lonDeg >= MinLonDeg && lonDeg <= MaxLonDeg : lonDeg >= MinLonDeg || lonDeg <= MaxLonDeg);
}
