// What applying alert observations changed.
namespace FusionService.Storage.Alerts;

/// <summary>The result of <see cref="AlertRepository.ApplyAsync"/>.</summary>
/// <param name="Changed">Alerts inserted or updated, as stored after the change.</param>
/// <param name="Deliveries">Webhook outbox rows written in the same transaction.</param>
public sealed record AlertApplyResult(IReadOnlyList<AlertRow> Changed, int Deliveries);
