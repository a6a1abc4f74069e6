// Where to look at the van of an alert.
namespace FusionService.Alerts;

/// <summary>The van of an alert at the alert's time: requests of this API (relative URLs, same key).</summary>
/// <param name="ViewAt">The instant to look at: when the condition began (data time, UTC).</param>
/// <param name="Track">The smoothed track from 5 minutes before the alert began to 5 minutes after it last held (or after
/// it began, while it is unresolved).</param>
/// <param name="Explain">What the filter did with each measurement around <c>view_at</c>.</param>
/// <param name="State">The van's current estimate.</param>
public sealed record AlertLinks(DateTimeOffset ViewAt, string Track, string Explain, string State);
