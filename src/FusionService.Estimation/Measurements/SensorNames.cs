// The one table of the sensor kinds' names as the API, the alert rules and the diagnostics write them.
namespace FusionService.Estimation.Measurements;

/// <summary>The names of the sensor kinds outside the core (snake_case, as in the API contracts and alert rules).</summary>
public static class SensorNames
{
    /// <summary>Sensor kinds in response order.</summary>
    public static IReadOnlyList<SensorKind> All { get; } = [SensorKind.GnssPosition, SensorKind.GnssVelocity, SensorKind.WheelSpeed, SensorKind.Imu];

    /// <summary>The names of <see cref="All"/>, in the same order: gnss_position, gnss_velocity, wheel, imu.</summary>
    public static IReadOnlyList<string> AllNames { get; } = [.. All.Select(Of)];

    /// <summary><c>gnss_position</c>, <c>gnss_velocity</c>, <c>wheel</c> or <c>imu</c>.</summary>
    /// <param name="kind">A defined sensor kind.</param>
    /// <exception cref="ArgumentOutOfRangeException">Not a defined sensor kind.</exception>
    public static string Of(SensorKind kind) => kind switch
    {
        SensorKind.GnssPosition => "gnss_position",
        SensorKind.GnssVelocity => "gnss_velocity",
        SensorKind.WheelSpeed => "wheel",
        SensorKind.Imu => "imu",
        _ => throw new ArgumentOutOfRangeException(nameof(kind), kind, "unknown sensor kind"),
    };

    /// <summary>True when <paramref name="name"/> is one of <see cref="AllNames"/> (ordinal comparison).</summary>
    /// <param name="name">A sensor name.</param>
    public static bool IsName(string name) => AllNames.Contains(name, StringComparer.Ordinal);
}
