// A time-sorted, fixed-rate record of a vehicle's true motion.
using System.Collections.ObjectModel;
using FusionService.Estimation.Geodesy;

namespace FusionService.Scenarios;

/// <summary>
/// True motion of one vehicle sampled at a fixed period, in a local east/north frame around an origin
/// latitude/longitude, with optional true sensor-error states and the spans during which the vehicle was stopped.
/// </summary>
/// <remarks>
/// Values between samples are interpolated linearly (heading along the shorter arc). Generators sample at
/// 100 Hz by default, where the chord error of a 10 m radius corner at 10 m/s is below 0.1 mm; times on the sample
/// grid return the stored sample exactly. The local frame is a simple scaling around the origin (see
/// <see cref="ToGeodeticDeg"/>): fine for invented scenarios within 20 km of the origin.
/// </remarks>
public sealed class TruthTrajectory
{
    private readonly TruthSample[] _samples;
    private readonly SensorErrorSample[]? _sensorErrors;
    private readonly ScenarioFrame _frame;

    /// <summary>Creates a trajectory; samples must be at least two, strictly at a fixed positive period.</summary>
    /// <param name="originLatitudeDeg">Latitude of the local frame's origin, degrees, within [-80, 80].</param>
    /// <param name="originLongitudeDeg">Longitude of the local frame's origin, degrees, within [-180, 180].</param>
    /// <param name="samples">True samples in time order at a fixed period.</param>
    /// <param name="sensorErrors">True sensor-error states at the same times, or null when the sensors' errors are constants of the sensor suite.</param>
    /// <param name="stopIntervals">Spans in which the vehicle stands still (speed and yaw rate exactly 0), or null for none.</param>
    public TruthTrajectory(
        double originLatitudeDeg,
        double originLongitudeDeg,
        IReadOnlyList<TruthSample> samples,
        IReadOnlyList<SensorErrorSample>? sensorErrors = null,
        IReadOnlyList<TimeInterval>? stopIntervals = null)
    {
        ArgumentNullException.ThrowIfNull(samples);
        _frame = new ScenarioFrame(originLatitudeDeg, originLongitudeDeg);
        if (samples.Count < 2)
        {
            throw new ArgumentException("a trajectory needs at least two samples", nameof(samples));
        }

        _samples = [.. samples];
        SamplePeriodUs = _samples[1].TimeUs - _samples[0].TimeUs;
        if (SamplePeriodUs <= 0)
        {
            throw new ArgumentException("sample times must increase", nameof(samples));
        }

        for (int i = 1; i < _samples.Length; i++)
        {
            if (_samples[i].TimeUs - _samples[i - 1].TimeUs != SamplePeriodUs)
            {
                throw new ArgumentException($"sample {i} breaks the fixed period of {SamplePeriodUs} us", nameof(samples));
            }
        }

        if (sensorErrors is not null)
        {
            if (sensorErrors.Count != _samples.Length)
            {
                throw new ArgumentException("sensor errors must have one entry per sample", nameof(sensorErrors));
            }

            _sensorErrors = [.. sensorErrors];
            for (int i = 0; i < _sensorErrors.Length; i++)
            {
                if (_sensorErrors[i].TimeUs != _samples[i].TimeUs)
                {
                    throw new ArgumentException($"sensor error {i} is not at the time of sample {i}", nameof(sensorErrors));
                }
            }
        }

        Samples = Array.AsReadOnly(_samples);
        SensorErrors = _sensorErrors is null ? null : Array.AsReadOnly(_sensorErrors);
        StopIntervals = new ReadOnlyCollection<TimeInterval>(stopIntervals is null ? [] : [.. stopIntervals]);
    }

    /// <summary>Latitude of the local frame's origin, degrees.</summary>
    public double OriginLatitudeDeg => _frame.OriginLatitudeDeg;

    /// <summary>Longitude of the local frame's origin, degrees.</summary>
    public double OriginLongitudeDeg => _frame.OriginLongitudeDeg;

    /// <summary>Fixed sample period, microseconds.</summary>
    public long SamplePeriodUs { get; }

    /// <summary>Time of the first sample, Unix microseconds.</summary>
    public long StartTimeUs => _samples[0].TimeUs;

    /// <summary>Time of the last sample, Unix microseconds.</summary>
    public long EndTimeUs => _samples[^1].TimeUs;

    /// <summary>The samples in time order.</summary>
    public IReadOnlyList<TruthSample> Samples { get; }

    /// <summary>True sensor-error states, one per sample, or null when the sensor suite's constants apply.</summary>
    public IReadOnlyList<SensorErrorSample>? SensorErrors { get; }

    /// <summary>Spans in which the vehicle stands still: every sample inside has speed, yaw rate and acceleration exactly 0.</summary>
    public IReadOnlyList<TimeInterval> StopIntervals { get; }

    /// <summary>True when <paramref name="timeUs"/> lies within [first sample, last sample].</summary>
    /// <param name="timeUs">Time, Unix microseconds.</param>
    public bool Covers(long timeUs) => timeUs >= StartTimeUs && timeUs <= EndTimeUs;

    /// <summary>
    /// The truth at <paramref name="timeUs"/>: the stored sample on the sample grid, otherwise a linear
    /// interpolation of the two neighbours (heading along the shorter arc, wrapped to (-π, π]).
    /// </summary>
    /// <param name="timeUs">Time, Unix microseconds, within [<see cref="StartTimeUs"/>, <see cref="EndTimeUs"/>].</param>
    /// <exception cref="ArgumentOutOfRangeException">The time lies outside the trajectory.</exception>
    public TruthSample At(long timeUs)
    {
        int index = Locate(timeUs, out double fraction);
        TruthSample a = _samples[index];
        if (fraction == 0.0)
        {
            return a;
        }

        TruthSample b = _samples[index + 1];
        return new TruthSample(
            timeUs,
            Lerp(a.EastM, b.EastM, fraction),
            Lerp(a.NorthM, b.NorthM, fraction),
            Angles.WrapPi(a.HeadingRad + (fraction * Angles.WrapPi(b.HeadingRad - a.HeadingRad))),
            Lerp(a.SpeedMps, b.SpeedMps, fraction),
            Lerp(a.YawRateRps, b.YawRateRps, fraction),
            Lerp(a.AccelMps2, b.AccelMps2, fraction));
    }

    /// <summary>The true sensor-error states at <paramref name="timeUs"/> (interpolated like <see cref="At"/>), or null when the trajectory carries none.</summary>
    /// <param name="timeUs">Time, Unix microseconds, within the trajectory.</param>
    public SensorErrorSample? SensorErrorsAt(long timeUs)
    {
        if (_sensorErrors is null)
        {
            return null;
        }

        int index = Locate(timeUs, out double fraction);
        SensorErrorSample a = _sensorErrors[index];
        if (fraction == 0.0)
        {
            return a;
        }

        SensorErrorSample b = _sensorErrors[index + 1];
        return new SensorErrorSample(timeUs, Lerp(a.GyroBiasRps, b.GyroBiasRps, fraction), Lerp(a.WheelScale, b.WheelScale, fraction));
    }

    /// <summary>
    /// Latitude and longitude (degrees, WGS-84) of a local east/north position, scaled by the meridian and
    /// prime-vertical radii of curvature at the origin (exact inverse of <see cref="ToLocalM"/>; within 20 km of the
    /// origin it departs from a true east-north-up tangent plane by up to 0.577 d² |tan φ₀| / R, e.g. 0.36 m at 2 km for φ₀ = 45°).
    /// </summary>
    /// <param name="eastM">East from the origin, metres.</param>
    /// <param name="northM">North from the origin, metres.</param>
    /// <param name="latitudeDeg">Latitude, degrees.</param>
    /// <param name="longitudeDeg">Longitude, degrees, wrapped to (-180, 180].</param>
    public void ToGeodeticDeg(double eastM, double northM, out double latitudeDeg, out double longitudeDeg) =>
        _frame.ToGeodeticDeg(eastM, northM, out latitudeDeg, out longitudeDeg);

    /// <summary>Local east/north metres of a latitude/longitude; the exact inverse of <see cref="ToGeodeticDeg"/>.</summary>
    /// <param name="latitudeDeg">Latitude, degrees.</param>
    /// <param name="longitudeDeg">Longitude, degrees.</param>
    /// <param name="eastM">East from the origin, metres.</param>
    /// <param name="northM">North from the origin, metres.</param>
    public void ToLocalM(double latitudeDeg, double longitudeDeg, out double eastM, out double northM) =>
        _frame.ToLocalM(latitudeDeg, longitudeDeg, out eastM, out northM);

    /// <summary>
    /// Offset, metres east and north in this trajectory's frame, of a filter position given in the filter's own tangent
    /// plane (<paramref name="plane"/>, point (<paramref name="eastM"/>, <paramref name="northM"/>) on the ellipsoid) from the
    /// true position at <paramref name="timeUs"/>; compared through latitude and longitude, so the two frames may differ.
    /// </summary>
    public (double EastM, double NorthM) OffsetOf(long timeUs, in LocalTangentPlane plane, double eastM, double northM)
    {
        GeodeticPoint p = plane.ToGeodetic(new EnuPoint(eastM, northM, -((eastM * eastM) + (northM * northM)) / (2.0 * Wgs84.SemiMajorAxisM)));
        ToLocalM(p.LatitudeDeg, p.LongitudeDeg, out double east, out double north);
        TruthSample truth = At(timeUs);
        return (east - truth.EastM, north - truth.NorthM);
    }

    private static double Lerp(double a, double b, double fraction) => a + ((b - a) * fraction);

    private int Locate(long timeUs, out double fraction)
    {
        if (!Covers(timeUs))
        {
            throw new ArgumentOutOfRangeException(nameof(timeUs), timeUs, $"time outside the trajectory [{StartTimeUs}, {EndTimeUs}]");
        }

        long offsetUs = timeUs - StartTimeUs;
        int index = (int)(offsetUs / SamplePeriodUs);
        long remainderUs = offsetUs - (index * SamplePeriodUs);
        fraction = (double)remainderUs / SamplePeriodUs;
        return index;
    }
}
