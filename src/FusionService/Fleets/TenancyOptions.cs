// Per-fleet limits that are not rates.
using System.ComponentModel.DataAnnotations;

namespace FusionService.Fleets;

/// <summary>Settings of section <c>Tenancy</c>.</summary>
public sealed class TenancyOptions
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "Tenancy";

    /// <summary>
    /// Distinct vehicles a fleet may have when its own quota is not set (an admin key sets it with PUT /v1/fleet/quota,
    /// the operator with <c>keys quota</c>). Messages of a new vehicle beyond the quota are rejected, naming it. Default
    /// 5,000: five times a fleet of 1,000 vans, room for replaced trackers and renamed vehicles.
    /// </summary>
    [Range(1, 10_000_000)]
    public int DefaultMaxVehicles { get; set; } = 5_000;

    /// <summary>
    /// Seconds the quota and the known vehicles of a fleet are remembered before a new vehicle makes this process read
    /// them again (so a quota set, or vehicles added, by another process apply within this time). Default 30.
    /// </summary>
    [Range(0, 3600)]
    public int QuotaCacheSeconds { get; set; } = 30;
}
