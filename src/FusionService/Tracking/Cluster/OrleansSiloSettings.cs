// Settings of section Orleans: clustering mode, cluster id, ports and the address other silos reach this one on.
using System.Net;

namespace FusionService.Tracking.Cluster;

/// <summary>
/// Section <c>Orleans</c>, read once when the host is built (the clustering provider cannot change later).
/// </summary>
public sealed class OrleansSiloSettings
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "Orleans";

    /// <summary>
    /// <c>Orleans:ClusterMode</c>: <see cref="ClusteringMode.Localhost"/> (default) or <see cref="ClusteringMode.Postgres"/>.
    /// (Not <c>Orleans:Clustering</c>: Orleans reads that subsection itself as the name of a clustering provider.)
    /// </summary>
    public ClusteringMode Clustering { get; init; } = ClusteringMode.Localhost;

    /// <summary><c>Orleans:ClusterId</c>: processes with the same id on the same database form one cluster. Default <c>fusion</c>.</summary>
    public string ClusterId { get; init; } = "fusion";

    /// <summary><c>Orleans:SiloPort</c>: TCP port silos talk to each other on. Default 11111.</summary>
    public int SiloPort { get; init; } = 11111;

    /// <summary><c>Orleans:GatewayPort</c>: TCP port for Orleans clients; 0 for none. Default 30000.</summary>
    public int GatewayPort { get; init; } = 30000;

    /// <summary>
    /// <c>Orleans:AdvertisedAddress</c>: the IP address other silos reach this one on (Postgres clustering only). Empty
    /// (default): the first address of the machine's network interfaces, which suits one container per replica.
    /// </summary>
    public string? AdvertisedAddress { get; init; }

    /// <summary>
    /// <c>Orleans:ProbeTimeoutS</c>: seconds a silo waits for another's answer to a liveness probe (Orleans
    /// <c>ClusterMembershipOptions.ProbeTimeout</c>). Default 5, Orleans' own default.
    /// </summary>
    public int ProbeTimeoutS { get; init; } = 5;

    /// <summary>
    /// <c>Orleans:MissedProbesLimit</c>: missed probes after which a silo votes another dead (Orleans
    /// <c>ClusterMembershipOptions.NumMissedProbesLimit</c>). Default 3, Orleans' own default. Together with
    /// <see cref="ProbeTimeoutS"/> it sets how long the vehicles of a killed process wait before another takes them.
    /// </summary>
    public int MissedProbesLimit { get; init; } = 3;

    /// <summary>Reads and checks the section; a bad value names its key.</summary>
    /// <exception cref="InvalidOperationException">A value is out of range or cannot be read.</exception>
    public static OrleansSiloSettings From(IConfiguration configuration)
    {
        ArgumentNullException.ThrowIfNull(configuration);
        var section = configuration.GetSection(Section);
        var settings = new OrleansSiloSettings
        {
            Clustering = ReadMode(section["ClusterMode"]),
            ProbeTimeoutS = ReadPositive(section, "ProbeTimeoutS", 5),
            MissedProbesLimit = ReadPositive(section, "MissedProbesLimit", 3),
            ClusterId = section["ClusterId"] is { Length: > 0 } id ? id : "fusion",
            SiloPort = ReadPort(section, "SiloPort", 11111, allowZero: false),
            GatewayPort = ReadPort(section, "GatewayPort", 30000, allowZero: true),
            AdvertisedAddress = section["AdvertisedAddress"] is { Length: > 0 } address ? address : null,
        };
        if (settings.ClusterId.Length > 100)
        {
            throw new InvalidOperationException("Orleans:ClusterId must be at most 100 characters.");
        }

        if (settings.AdvertisedAddress is not null && !IPAddress.TryParse(settings.AdvertisedAddress, out _))
        {
            throw new InvalidOperationException(
                "Orleans:AdvertisedAddress '" + settings.AdvertisedAddress + "' is not an IP address (e.g. 10.0.0.5).");
        }

        return settings;
    }

    private static ClusteringMode ReadMode(string? value)
    {
        if (string.IsNullOrEmpty(value))
        {
            return ClusteringMode.Localhost;
        }

        if (Enum.TryParse<ClusteringMode>(value, ignoreCase: true, out var mode) && Enum.IsDefined(mode))
        {
            return mode;
        }

        throw new InvalidOperationException("Orleans:ClusterMode '" + value + "' is not one of Localhost, Postgres.");
    }

    private static int ReadPositive(IConfigurationSection section, string key, int fallback)
    {
        string? value = section[key];
        if (string.IsNullOrEmpty(value))
        {
            return fallback;
        }

        if (int.TryParse(value, System.Globalization.NumberStyles.None, System.Globalization.CultureInfo.InvariantCulture, out int number)
            && number is >= 1 and <= 600)
        {
            return number;
        }

        throw new InvalidOperationException("Orleans:" + key + " '" + value + "' is not a whole number from 1 to 600.");
    }

    private static int ReadPort(IConfigurationSection section, string key, int fallback, bool allowZero)
    {
        string? value = section[key];
        if (string.IsNullOrEmpty(value))
        {
            return fallback;
        }

        if (int.TryParse(value, System.Globalization.NumberStyles.None, System.Globalization.CultureInfo.InvariantCulture, out int port)
            && port <= 65535 && (port > 0 || allowZero))
        {
            return port;
        }

        throw new InvalidOperationException(
            "Orleans:" + key + " '" + value + "' is not a TCP port (" + (allowZero ? "0" : "1") + "-65535).");
    }
}
