// A GNSS outage.
namespace FusionService.Audit;

/// <summary>A gap between two GNSS position fixes while the vehicle moved.</summary>
/// <param name="From">Time of the fix before the gap.</param>
/// <param name="To">Time of the fix after the gap.</param>
/// <param name="DurationS">Length, seconds.</param>
public sealed record GnssOutageResponse(DateTimeOffset From, DateTimeOffset To, double DurationS);
