using FusionService.Estimation.Measurements;
using FusionService.Estimation.Tracking;

namespace FusionService.Estimation.Tests.Tracking;

/// <summary>Keeps the newest outcome of every measurement a track reports (replays supersede earlier outcomes).</summary>
internal sealed class OutcomeLog : ITrackObserver
{
    public Dictionary<(long TimeUs, SensorKind Kind, ulong Key), MeasurementOutcome> Final { get; } = [];

    public int Replays { get; private set; }

    public void OnOutcome(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay)
    {
        if (outcome.Kind is OutcomeKind.Duplicate or OutcomeKind.Conflict)
        {
            return;
        }

        Final[(m.TimeUs, m.Kind, m.MessageKey)] = outcome;
        if (isReplay)
        {
            Replays++;
        }
    }
}
