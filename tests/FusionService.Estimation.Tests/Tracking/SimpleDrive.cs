using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Tracking;

/// <summary>
/// A small hand-built drive for focused track tests (invented data): straight, left turn, straight, stop,
/// with 1 Hz GNSS, 10 Hz wheel and IMU. Truth is propagated with the CTRA model itself at 100 Hz.
/// </summary>
internal sealed class SimpleDrive
{
    public const long StartUs = 1_800_000_000_000_000;
    public static readonly GeodeticPoint Origin = GeodeticPoint.FromDegrees(47.37, 8.54);

    public List<Measurement> Measurements { get; } = [];

    public List<(long TimeUs, StateVector Truth)> Truth { get; } = [];

    /// <summary>Message keys of GNSS fixes displaced by an injected 30-100 m jump.</summary>
    public HashSet<ulong> Outliers { get; } = [];

    public static SimpleDrive Create(int seed, double durationS = 300, double gnssSigmaM = 3.0, double wheelScale = 1.0,
        double gyroBiasRps = 0.0, double stopFromS = double.PositiveInfinity, double outlierProbability = 0.0)
    {
        var drive = new SimpleDrive();
        var random = new Random(seed);
        var plane = new LocalTangentPlane(Origin);
        StateVector x = default;
        x[HeadingRad] = 0.3;
        x[SpeedMps] = 10.0;
        x[WheelScale] = wheelScale;
        x[GyroBiasRps] = gyroBiasRps;
        ulong key = 0;
        const long stepUs = 10_000;
        for (long t = 0; t <= (long)(durationS * 1e6); t += stepUs)
        {
            double ts = t / 1e6;
            double phase = ts % 120;
            x[YawRateRps] = phase is > 40 and < 55 ? 0.12 : phase is > 80 and < 90 ? -0.15 : 0.0;
            x[AccelMps2] = phase is > 20 and < 25 ? 0.8 : phase is > 60 and < 65 ? -0.8 : 0.0;
            if (ts >= stopFromS)
            {
                x[YawRateRps] = 0;
                x[AccelMps2] = x[SpeedMps] > 0 ? -2.0 : 0.0;
                if (x[SpeedMps] <= 0.02)
                {
                    x[SpeedMps] = 0;
                    x[AccelMps2] = 0;
                }
            }

            long timeUs = StartUs + t;
            drive.Truth.Add((timeUs, x));
            if (t % 100_000 == 0)
            {
                // Pulse-counting wheel sensors read exactly zero at a standstill.
                double wheel = x[SpeedMps] == 0 ? 0 : Math.Max(0, (x[SpeedMps] * x[WheelScale]) + (0.05 * Gauss(random)));
                drive.Measurements.Add(Measurement.WheelSpeed(timeUs, ++key, wheel));
                drive.Measurements.Add(Measurement.Imu(timeUs, ++key, x[YawRateRps] + x[GyroBiasRps] + (0.005 * Gauss(random)), x[AccelMps2] + (0.3 * Gauss(random))));
            }

            if (t % 1_000_000 == 0)
            {
                double e = x[EastM] + (gnssSigmaM * Gauss(random)), n = x[NorthM] + (gnssSigmaM * Gauss(random));
                if (random.NextDouble() < outlierProbability)
                {
                    double jumpM = 30 + (70 * random.NextDouble()), direction = 2 * Math.PI * random.NextDouble();
                    e += jumpM * Math.Cos(direction);
                    n += jumpM * Math.Sin(direction);
                    drive.Outliers.Add(key + 1);
                }

                GeodeticPoint p = plane.ToGeodetic(new EnuPoint(e, n, 0));
                drive.Measurements.Add(Measurement.GnssPosition(timeUs, ++key, p.LatitudeDeg, p.LongitudeDeg, gnssSigmaM));
            }

            CtraMotionModel.Predict(ref x, stepUs / 1e6, out _);
        }

        drive.Measurements.Sort((a, b) => global::FusionService.Estimation.Tracking.VehicleTrack.CompareKey(a, b));
        return drive;
    }

    public static double Gauss(Random random)
    {
        double u1 = 1.0 - random.NextDouble(), u2 = random.NextDouble();
        return Math.Sqrt(-2.0 * Math.Log(u1)) * Math.Cos(2.0 * Math.PI * u2);
    }
}
