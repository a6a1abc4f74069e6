// A generated scenario: truth, measurements in canonical order and per-measurement ground truth.
using System.Collections.ObjectModel;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Measurements;

namespace FusionService.Scenarios;

/// <summary>
/// Output of <see cref="MeasurementGenerator"/>: the truth, the measurements in canonical processing order
/// (time, kind, message key) and, at the same indices, what the generator knows about each one.
/// </summary>
public sealed class ScenarioRun
{
    private readonly Dictionary<ulong, int> _indexByKey;

    internal ScenarioRun(TruthTrajectory truth, SensorSuite suite, int seed, Measurement[] measurements, MeasurementTruth[] measurementTruths)
    {
        Truth = truth;
        Suite = suite;
        Seed = seed;
        Measurements = Array.AsReadOnly(measurements);
        MeasurementTruths = Array.AsReadOnly(measurementTruths);
        _indexByKey = new Dictionary<ulong, int>(measurements.Length);
        for (int i = 0; i < measurements.Length; i++)
        {
            _indexByKey.Add(measurements[i].MessageKey, i);
            if (measurementTruths[i].IsOutlier)
            {
                OutlierCount++;
            }
        }
    }

    /// <summary>The truth the measurements were generated from.</summary>
    public TruthTrajectory Truth { get; }

    /// <summary>The sensor suite used.</summary>
    public SensorSuite Suite { get; }

    /// <summary>The seed used.</summary>
    public int Seed { get; }

    /// <summary>Measurements in canonical order (time, kind, message key); message keys are unique.</summary>
    public ReadOnlyCollection<Measurement> Measurements { get; }

    /// <summary>Ground truth about each measurement, at the same index as <see cref="Measurements"/>.</summary>
    public ReadOnlyCollection<MeasurementTruth> MeasurementTruths { get; }

    /// <summary>Number of GNSS position fixes that are outliers.</summary>
    public int OutlierCount { get; }

    /// <summary>Index in <see cref="Measurements"/> of the measurement with <paramref name="messageKey"/>.</summary>
    /// <param name="messageKey">Message key.</param>
    /// <param name="index">Index, or -1 when absent.</param>
    public bool TryGetIndex(ulong messageKey, out int index)
    {
        if (_indexByKey.TryGetValue(messageKey, out index))
        {
            return true;
        }

        index = -1;
        return false;
    }

    /// <summary>Ground truth of the measurement with <paramref name="messageKey"/>.</summary>
    /// <param name="messageKey">Message key.</param>
    /// <exception cref="KeyNotFoundException">No measurement of this run has the key.</exception>
    public MeasurementTruth GetMeasurementTruth(ulong messageKey) => MeasurementTruths[_indexByKey[messageKey]];

    /// <summary>
    /// The true eight-component filter state (<c>StateIndex</c> order) at <paramref name="timeUs"/>: the truth's motion
    /// and its sensor errors, or the suite's constant gyro bias and wheel scale when the truth carries none.
    /// </summary>
    /// <param name="timeUs">Time, Unix microseconds, within the truth.</param>
    public StateVector TrueStateAt(long timeUs)
    {
        TruthSample motion = Truth.At(timeUs);
        SensorErrorSample errors = Truth.SensorErrorsAt(timeUs) ?? new SensorErrorSample(timeUs, Suite.GyroBiasRps, Suite.WheelScale);
        return ModelConsistentTruth.ToStateVector(motion, errors);
    }
}
