// Where a page of alerts ended.
namespace FusionService.Storage.Alerts;

/// <summary>The sort key of the last alert of a page: the next page starts after it.</summary>
/// <param name="SeverityRank">3 critical, 2 warning, 1 info (<see cref="AlertRepository.SeverityRank"/>).</param>
/// <param name="StartedAt">The alert's start.</param>
/// <param name="AlertId">The alert's id (breaks ties).</param>
public sealed record AlertPosition(int SeverityRank, DateTimeOffset StartedAt, Guid AlertId);
