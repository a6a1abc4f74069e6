using FusionService.Estimation.Measurements;

namespace FusionService.Estimation.Tracking;

/// <summary>Receives the outcome of every measurement a <see cref="VehicleTrack"/> processes, including re-processing after a late arrival.</summary>
public interface ITrackObserver
{
    /// <summary>
    /// <paramref name="m"/> was processed with <paramref name="outcome"/>, leaving the track in <paramref name="posterior"/>.
    /// <paramref name="isReplay"/> is true when the measurement had been processed before and is processed again because a
    /// late measurement was inserted before it; the newer outcome supersedes the older one. Measurements between the
    /// checkpoint a re-processing starts from and the inserted one are re-processed to the outcomes already reported
    /// and are not reported again.
    /// </summary>
    void OnOutcome(in Measurement m, in MeasurementOutcome outcome, in TrackState posterior, bool isReplay);
}
