namespace FusionService.Estimation.Diagnostics;

/// <summary>
/// Distance from wheel-speed samples corrected by the estimated wheel-speed scale (the filter's model: the wheel
/// reads speed x scale, so the speed is the reading divided by the scale), integrated by the trapezoidal rule between
/// consecutive samples. A gap longer than <see cref="MaxGapS"/> contributes nothing (the wheel sensor was silent).
/// Samples are fed one at a time in time order.
/// </summary>
public sealed class OdometerDistance
{
    private long _lastUs = long.MinValue;
    private double _lastSpeedMps;

    /// <summary>Creates the integrator.</summary>
    /// <param name="maxGapS">Longest gap between samples that is integrated, seconds, positive. Default 2.</param>
    public OdometerDistance(double maxGapS = 2.0)
    {
        if (!(maxGapS > 0) || !double.IsFinite(maxGapS))
        {
            throw new ArgumentOutOfRangeException(nameof(maxGapS), maxGapS, "must be finite and positive");
        }

        MaxGapS = maxGapS;
    }

    /// <summary>Longest gap between samples that is integrated, seconds.</summary>
    public double MaxGapS { get; }

    /// <summary>Distance so far, metres (signed: a reversing wheel sensor subtracts).</summary>
    public double DistanceM { get; private set; }

    /// <summary>Adds a sample.</summary>
    /// <param name="timeUs">Sample time, Unix microseconds, not before the previous sample.</param>
    /// <param name="wheelSpeedMps">Wheel reading, m/s.</param>
    /// <param name="wheelScale">Estimated wheel-speed scale at that time, dimensionless, positive (1 when calibrated).</param>
    /// <exception cref="ArgumentException">Out of time order, non-finite values or a scale that is not positive.</exception>
    public void Add(long timeUs, double wheelSpeedMps, double wheelScale)
    {
        if (!double.IsFinite(wheelSpeedMps) || !(wheelScale > 0) || !double.IsFinite(wheelScale))
        {
            throw new ArgumentException("wheel speed must be finite and the scale finite and positive");
        }

        if (_lastUs != long.MinValue && timeUs < _lastUs)
        {
            throw new ArgumentException($"sample at {timeUs} us precedes the previous one at {_lastUs} us", nameof(timeUs));
        }

        double speed = wheelSpeedMps / wheelScale;
        if (_lastUs != long.MinValue)
        {
            double dtS = (timeUs - _lastUs) / 1e6;
            if (dtS <= MaxGapS)
            {
                DistanceM += 0.5 * (speed + _lastSpeedMps) * dtS;
            }
        }

        _lastUs = timeUs;
        _lastSpeedMps = speed;
    }
}
