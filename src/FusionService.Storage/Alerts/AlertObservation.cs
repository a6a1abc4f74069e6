// What an evaluator says about one alert kind of one vehicle.
namespace FusionService.Storage.Alerts;

/// <summary>
/// The current view of one alert condition: raised or still holding (<see cref="Resolve"/> false) or cleared
/// (<see cref="Resolve"/> true). Applying the same observation twice changes nothing (see
/// <see cref="AlertRepository.ApplyAsync"/>), which is what makes re-processing after a restart safe.
/// </summary>
/// <param name="Kind">Alert kind.</param>
/// <param name="Severity"><c>info</c>, <c>warning</c> or <c>critical</c>.</param>
/// <param name="StartedAt">When the condition began (data time, UTC).</param>
/// <param name="LastSeenAt">Newest instant at which it held (data time, UTC).</param>
/// <param name="Count">Occurrences so far in this episode (absolute, not an increment), at least 1.</param>
/// <param name="Summary">One plain sentence.</param>
/// <param name="DetailsJson">The numbers behind it as a JSON object.</param>
/// <param name="Resolve">True when the condition has cleared for the rule's clear time.</param>
public sealed record AlertObservation(
    string Kind,
    string Severity,
    DateTimeOffset StartedAt,
    DateTimeOffset LastSeenAt,
    int Count,
    string Summary,
    string DetailsJson,
    bool Resolve);
