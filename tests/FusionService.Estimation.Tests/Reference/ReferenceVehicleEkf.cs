using FusionService.Estimation.Gating;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Linear;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using MathNet.Numerics.LinearAlgebra;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Reference;

/// <summary>
/// The vehicle EKF written the straightforward way with MathNet dense matrices (<see cref="DenseKalmanFilter"/>), as an
/// oracle for the fast fixed-size filter and as the baseline of the benchmarks. It shares only the motion model
/// (<see cref="CtraMotionModel"/>) with the fast filter; measurement models, covariance algebra and gating are its own.
/// It covers the running phase on moving data (no standstill, no reset, no re-anchoring).
/// </summary>
internal sealed class ReferenceVehicleEkf
{
    private readonly TrackOptions _options;
    private readonly NoiseProfile _profile;
    private readonly ChiSquareGate _gate;
    private readonly LocalTangentPlane _plane;
    private GaussianEstimate _estimate;

    public ReferenceVehicleEkf(in TrackState running, TrackOptions options, NoiseProfile profile)
    {
        _options = options;
        _profile = profile;
        _gate = new ChiSquareGate(options.GateProbability);
        _plane = running.Plane;
        TimeUs = running.TimeUs;
        StateVector x = running.X;
        StateMatrix p = running.P;
        _estimate = new GaussianEstimate(
            Vector<double>.Build.Dense(8, i => x[i]),
            Matrix<double>.Build.Dense(8, 8, (i, j) => p[(i * 8) + j]));
    }

    public long TimeUs { get; private set; }

    public Vector<double> Mean => _estimate.Mean;

    public Matrix<double> Covariance => _estimate.Covariance;

    public OutcomeKind Process(in Measurement m)
    {
        Predict(m.TimeUs);
        Vector<double> x = _estimate.Mean;
        var h = Matrix<double>.Build.Dense(2, 8);
        Vector<double> residual;
        Matrix<double> r;
        switch (m.Kind)
        {
            case SensorKind.GnssPosition:
                EnuPoint enu = _plane.ToEnu(GeodeticPoint.FromDegrees(m.Value0, m.Value1));
                h[0, EastM] = 1;
                h[1, NorthM] = 1;
                residual = Vector<double>.Build.DenseOfArray([enu.EastM - x[EastM], enu.NorthM - x[NorthM]]);
                r = Matrix<double>.Build.DenseDiagonal(2, 2, (double)m.Value2 * m.Value2);
                break;
            case SensorKind.GnssVelocity when m.Value0 >= _options.CourseMinSpeedMps && !double.IsNaN(m.Value1):
                double courseSigma = Math.Max(m.Value2 / m.Value0, _options.CourseSigmaFloorRad);
                h[0, SpeedMps] = 1;
                h[1, HeadingRad] = 1;
                double heading = Angles.WrapPi((Math.PI / 2) - m.Value1);
                residual = Vector<double>.Build.DenseOfArray([m.Value0 - x[SpeedMps], Angles.WrapPi(heading - x[HeadingRad])]);
                r = Matrix<double>.Build.DenseOfDiagonalArray([(double)m.Value2 * m.Value2, courseSigma * courseSigma]);
                break;
            case SensorKind.GnssVelocity:
                h = Matrix<double>.Build.Dense(1, 8);
                h[0, SpeedMps] = 1;
                residual = Vector<double>.Build.DenseOfArray([m.Value0 - x[SpeedMps]]);
                r = Matrix<double>.Build.DenseOfDiagonalArray([(double)m.Value2 * m.Value2]);
                break;
            case SensorKind.WheelSpeed:
                h = Matrix<double>.Build.Dense(1, 8);
                h[0, SpeedMps] = x[WheelScale];
                h[0, WheelScale] = x[SpeedMps];
                residual = Vector<double>.Build.DenseOfArray([m.Value0 - (x[SpeedMps] * x[WheelScale])]);
                r = Matrix<double>.Build.DenseOfDiagonalArray([_profile.WheelSpeedSigmaMps * _profile.WheelSpeedSigmaMps]);
                break;
            case SensorKind.Imu when double.IsNaN(m.Value1):
                h = Matrix<double>.Build.Dense(1, 8);
                h[0, YawRateRps] = 1;
                h[0, GyroBiasRps] = 1;
                residual = Vector<double>.Build.DenseOfArray([m.Value0 - x[YawRateRps] - x[GyroBiasRps]]);
                r = Matrix<double>.Build.DenseOfDiagonalArray([_profile.GyroSigmaRps * _profile.GyroSigmaRps]);
                break;
            case SensorKind.Imu:
                h[0, YawRateRps] = 1;
                h[0, GyroBiasRps] = 1;
                h[1, AccelMps2] = 1;
                residual = Vector<double>.Build.DenseOfArray([m.Value0 - x[YawRateRps] - x[GyroBiasRps], m.Value1 - x[AccelMps2]]);
                r = Matrix<double>.Build.DenseOfDiagonalArray([_profile.GyroSigmaRps * _profile.GyroSigmaRps, _profile.AccelSigmaMps2 * _profile.AccelSigmaMps2]);
                break;
            default:
                throw new ArgumentOutOfRangeException(nameof(m), m.Kind, "unknown kind");
        }

        // The dense update forms z - H x; passing z = residual + H x makes its innovation the extended filter's residual.
        DenseUpdateResult result = DenseKalmanFilter.Update(_estimate, residual + (h * x), h, r);
        if (result.Nis > _gate.Threshold(residual.Count))
        {
            return OutcomeKind.Gated;
        }

        Vector<double> mean = result.Posterior.Mean.Clone();
        mean[HeadingRad] = Angles.WrapPi(mean[HeadingRad]);
        _estimate = new GaussianEstimate(mean, result.Posterior.Covariance);
        return OutcomeKind.Accepted;
    }

    private void Predict(long timeUs)
    {
        double remaining = (timeUs - TimeUs) / 1e6;
        while (remaining > 0)
        {
            double step = Math.Min(remaining, _options.MaxPredictionStepS);
            StateVector x = default;
            for (int i = 0; i < 8; i++)
            {
                x[i] = _estimate.Mean[i];
            }

            StateVector prior = x;
            CtraMotionModel.Predict(ref x, step, out StateMatrix f);
            StateMatrix q = default;
            CtraMotionModel.AddProcessNoise(ref q, prior, step, _profile, stationary: false);
            GaussianEstimate predicted = DenseKalmanFilter.Predict(
                _estimate,
                Matrix<double>.Build.Dense(8, 8, (i, j) => f[(i * 8) + j]),
                Matrix<double>.Build.Dense(8, 8, (i, j) => q[(i * 8) + j]));
            _estimate = new GaussianEstimate(Vector<double>.Build.Dense(8, i => x[i]), predicted.Covariance);
            remaining -= step;
        }

        TimeUs = timeUs;
    }
}
