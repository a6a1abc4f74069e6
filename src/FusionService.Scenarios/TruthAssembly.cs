// Building truth trajectories from parts: joining them and carrying a van along a straight line.
namespace FusionService.Scenarios;

/// <summary>Joins truth parts end to end and builds a carried (towed) straight-line part.</summary>
internal static class TruthAssembly
{
    /// <summary>
    /// The van carried from <paramref name="from"/> along its heading for <paramref name="distanceM"/> metres: speed ramps
    /// up at <paramref name="accelMps2"/> to <paramref name="speedMps"/> (less when the distance is too short), holds, and
    /// ramps down to rest; yaw rate 0. Samples from <paramref name="startTimeUs"/> at <paramref name="periodUs"/>, the
    /// last one at rest at the end.
    /// </summary>
    public static TruthSample[] Carry(TruthSample from, double distanceM, double speedMps, double accelMps2, long startTimeUs, long periodUs)
    {
        double v = Math.Min(speedMps, Math.Sqrt(accelMps2 * distanceM));
        double rampS = v / accelMps2;
        double rampM = v * v / (2.0 * accelMps2);
        double cruiseS = (distanceM - (2.0 * rampM)) / v;
        double totalS = (2.0 * rampS) + cruiseS;
        int count = checked((int)Math.Ceiling(totalS * 1e6 / periodUs) + 1);
        var samples = new TruthSample[count];
        double cos = Math.Cos(from.HeadingRad), sin = Math.Sin(from.HeadingRad);
        for (int n = 0; n < count; n++)
        {
            double t = Math.Min(n * periodUs / 1e6, totalS);
            double s, speed, accel;
            if (n == count - 1)
            {
                (s, speed, accel) = (distanceM, 0.0, 0.0);
            }
            else if (t < rampS)
            {
                (s, speed, accel) = (0.5 * accelMps2 * t * t, accelMps2 * t, accelMps2);
            }
            else if (t < rampS + cruiseS)
            {
                (s, speed, accel) = (rampM + (v * (t - rampS)), v, 0.0);
            }
            else
            {
                double u = t - rampS - cruiseS;
                (s, speed, accel) = (distanceM - rampM + (v * u) - (0.5 * accelMps2 * u * u), v - (accelMps2 * u), -accelMps2);
            }

            samples[n] = new TruthSample(startTimeUs + (n * periodUs), from.EastM + (s * cos), from.NorthM + (s * sin), from.HeadingRad, speed, 0.0, accel);
        }

        return samples;
    }

    /// <summary>The parts joined in order; each part must start one sample period after the previous one ends.</summary>
    public static TruthTrajectory Join(double originLatitudeDeg, double originLongitudeDeg, IReadOnlyList<(IReadOnlyList<TruthSample> Samples, IReadOnlyList<TimeInterval> Stops)> parts)
    {
        var samples = new List<TruthSample>();
        var stops = new List<TimeInterval>();
        foreach ((IReadOnlyList<TruthSample> partSamples, IReadOnlyList<TimeInterval> partStops) in parts)
        {
            samples.AddRange(partSamples);
            stops.AddRange(partStops);
        }

        return new TruthTrajectory(originLatitudeDeg, originLongitudeDeg, samples, null, stops);
    }
}
