// The smallest upload that gives a vehicle a state: two GNSS fixes that agree.
using System.Globalization;

namespace FusionService.Tests.Infrastructure;

/// <summary>
/// Two fixes a second apart, 5 m east at 5 m/s, ending a second ago: a track starts from a fix the next one confirms
/// (docs/estimation.md, "Track start"), so this is the least a test sends to have a state to read.
/// </summary>
internal static class StartingFixes
{
    /// <summary>A JSON array of the two fixes of <paramref name="vehicle"/>.</summary>
    public static string Two(string vehicle) =>
        "[" + Fix(vehicle, -2, 7.001) + "," + Fix(vehicle, -1, 7.001 + (5.0 / (111_320.0 * Math.Cos(45.001 * Math.PI / 180)))) + "]";

    private static string Fix(string vehicle, int secondsAgo, double lonDeg) =>
        "{\"vehicle\":\"" + vehicle + "\",\"kind\":\"gnss\",\"time\":\"" + DateTimeOffset.UtcNow.AddSeconds(secondsAgo).ToString("O", CultureInfo.InvariantCulture)
        + "\",\"lat_deg\":45.001,\"lon_deg\":" + lonDeg.ToString("R", CultureInfo.InvariantCulture) + ",\"accuracy_m\":3,\"speed_mps\":5,\"course_deg\":90}";
}
