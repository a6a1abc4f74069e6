// The string key of a vehicle track grain.
using System.Globalization;

namespace FusionService.Tracking;

/// <summary>Grain keys <c>"{fleetId}/{vehicleId}"</c> (vehicle ids cannot contain '/').</summary>
public static class GrainKeys
{
    /// <summary>The key of a vehicle's track grain.</summary>
    public static string Of(Guid fleetId, string vehicleId) => fleetId.ToString("D", CultureInfo.InvariantCulture) + "/" + vehicleId;

    /// <summary>Splits a key made by <see cref="Of"/>.</summary>
    /// <exception cref="FormatException">Not such a key.</exception>
    public static (Guid FleetId, string VehicleId) Parse(string key)
    {
        ArgumentNullException.ThrowIfNull(key);
        int slash = key.IndexOf('/', StringComparison.Ordinal);
        if (slash < 0 || !Guid.TryParseExact(key.AsSpan(0, slash), "D", out var fleet) || slash == key.Length - 1)
        {
            throw new FormatException("not a vehicle track key: " + key);
        }

        return (fleet, key[(slash + 1)..]);
    }
}
