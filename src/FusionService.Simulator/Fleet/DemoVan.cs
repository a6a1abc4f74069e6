// One van of the demo fleet with its truth, measurements and uploads.
using System.Collections.ObjectModel;
using FusionService.Estimation.Measurements;
using FusionService.Scenarios;
using FusionService.Simulator.Messages;

namespace FusionService.Simulator.Fleet;

/// <summary>One van of a <see cref="DemoFleet"/>: its round, true motion, sensors, measurements and upload schedule.</summary>
public sealed class DemoVan
{
    internal DemoVan(
        string id,
        int index,
        DemoFaultKind fault,
        DeliveryRound round,
        TruthTrajectory truth,
        SensorSuite suite,
        Measurement[] measurements,
        ArrivalSchedule schedule,
        TimeInterval? towSpan)
    {
        Id = id;
        Index = index;
        Fault = fault;
        Round = round;
        Truth = truth;
        Suite = suite;
        Measurements = Array.AsReadOnly(measurements);
        Schedule = schedule;
        TowSpan = towSpan;
    }

    /// <summary>Vehicle id, e.g. "van-01".</summary>
    public string Id { get; }

    /// <summary>0-based number of the van in the fleet.</summary>
    public int Index { get; }

    /// <summary>The van-specific fault, or <see cref="DemoFaultKind.None"/>.</summary>
    public DemoFaultKind Fault { get; }

    /// <summary>The planned delivery round (for the tow van, the part after the lift is never driven).</summary>
    public DeliveryRound Round { get; }

    /// <summary>The van's true motion in the depot's frame (for the tow van, including the tow).</summary>
    public TruthTrajectory Truth { get; }

    /// <summary>The sensors as configured: wheel scale, gyro bias, outliers, and the canyon and underpass spans of this van.</summary>
    public SensorSuite Suite { get; }

    /// <summary>All measurements in canonical order (time, kind, message key), message keys unique per van.</summary>
    public ReadOnlyCollection<Measurement> Measurements { get; }

    /// <summary>When each measurement reaches the server: batches, delays, retry copies, late uploads.</summary>
    public ArrivalSchedule Schedule { get; }

    /// <summary>Tow van only: from the lift onto the truck until the van is set down at the yard; otherwise null.</summary>
    public TimeInterval? TowSpan { get; }

    /// <summary>Time spans this van spends in the canyon blocks (GNSS biased and heavy-tailed).</summary>
    public IEnumerable<TimeInterval> CanyonSpans => Suite.UrbanCanyons.Select(c => c.Span);

    /// <summary>Time spans this van spends in the underpass (no GNSS).</summary>
    public IReadOnlyList<TimeInterval> OutageSpans => Suite.GnssOutages;

    /// <summary>The van's uploads in arrival order, as ingest messages (built on each call).</summary>
    public IReadOnlyList<TelemetryBatch> BuildBatches() => TelemetryMessages.ToBatches(Id, Schedule);
}
