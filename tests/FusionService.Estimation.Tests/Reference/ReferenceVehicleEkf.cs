using FusionService.Estimation.Gating;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Tracking;
using MathNet.Numerics.LinearAlgebra;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Reference;

/// <summary>
/// The vehicle EKF written the straightforward way with MathNet dense matrices (<see cref="DenseKalmanFilter"/>), as an
/// oracle for the fast fixed-size filter and as the baseline of the benchmarks. It shares only the motion model
/// (<see cref="CtraMotionModel"/>) with the fast filter; measurement models, the Gauss-Markov GNSS error (φ = exp(-Δt/τ),
/// driving variance σ² (1 - φ²), Brown and Hwang 2012; from memory), covariance algebra and gating are its own.
/// It covers the running phase on moving data (no standstill, no reset, no re-anchoring).
/// </summary>
internal sealed class ReferenceVehicleEkf
{
    private readonly TrackOptions _options;
    private readonly NoiseProfile _profile;
    private readonly ChiSquareGate _gate;
    private readonly LocalTangentPlane _plane;
    private const int N = StateIndex.Count;
    private GaussianEstimate _estimate;
    private double _correlatedVarianceM2;

    public ReferenceVehicleEkf(in TrackState running, TrackOptions options, NoiseProfile profile)
    {
        _options = options;
        _profile = profile;
        _gate = new ChiSquareGate(options.GateProbability);
        _plane = running.Plane;
        TimeUs = running.TimeUs;
        _correlatedVarianceM2 = running.GnssCorrelatedVarianceM2;
        StateVector x = running.X;
        StateMatrix p = running.P;
        _estimate = new GaussianEstimate(
            Vector<double>.Build.Dense(N, i => x[i]),
            Matrix<double>.Build.Dense(N, N, (i, j) => p[(i * N) + j]));
    }

    public long TimeUs { get; private set; }

    public Vector<double> Mean => _estimate.Mean;

    public Matrix<double> Covariance => _estimate.Covariance;

    public OutcomeKind Process(in Measurement m)
    {
        Predict(m.TimeUs);
        if (m.Kind == SensorKind.GnssPosition)
        {
            // The error process's stationary variance follows the fix's reported one; a rise enters as process noise.
            double target = _profile.GnssCorrelatedFraction * m.Value2 * m.Value2;
            if (target > _correlatedVarianceM2)
            {
                Matrix<double> raised = _estimate.Covariance.Clone();
                raised[GnssErrorEastM, GnssErrorEastM] += target - _correlatedVarianceM2;
                raised[GnssErrorNorthM, GnssErrorNorthM] += target - _correlatedVarianceM2;
                _estimate = new GaussianEstimate(_estimate.Mean, raised);
            }

            _correlatedVarianceM2 = target;
        }

        Vector<double> x = _estimate.Mean;
        var h = Matrix<double>.Build.Dense(2, N);
        Vector<double> residual;
        Matrix<double> r;
        switch (m.Kind)
        {
            case SensorKind.GnssPosition:
                EnuPoint enu = _plane.ToEnu(GeodeticPoint.FromDegrees(m.Value0, m.Value1));
                h[0, EastM] = 1;
                h[0, GnssErrorEastM] = 1;
                h[1, NorthM] = 1;
                h[1, GnssErrorNorthM] = 1;
                residual = Vector<double>.Build.DenseOfArray(
                    [enu.EastM - x[EastM] - x[GnssErrorEastM], enu.NorthM - x[NorthM] - x[GnssErrorNorthM]]);
                r = Matrix<double>.Build.DenseDiagonal(2, 2, (1 - _profile.GnssCorrelatedFraction) * m.Value2 * m.Value2);
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
                h = Matrix<double>.Build.Dense(1, N);
                h[0, SpeedMps] = 1;
                residual = Vector<double>.Build.DenseOfArray([m.Value0 - x[SpeedMps]]);
                r = Matrix<double>.Build.DenseOfDiagonalArray([(double)m.Value2 * m.Value2]);
                break;
            case SensorKind.WheelSpeed:
                h = Matrix<double>.Build.Dense(1, N);
                h[0, SpeedMps] = x[WheelScale];
                h[0, WheelScale] = x[SpeedMps];
                residual = Vector<double>.Build.DenseOfArray([m.Value0 - (x[SpeedMps] * x[WheelScale])]);
                r = Matrix<double>.Build.DenseOfDiagonalArray([_profile.WheelSpeedSigmaMps * _profile.WheelSpeedSigmaMps]);
                break;
            case SensorKind.Imu when double.IsNaN(m.Value1):
                h = Matrix<double>.Build.Dense(1, N);
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
            for (int i = 0; i < N; i++)
            {
                x[i] = _estimate.Mean[i];
            }

            StateVector prior = x;
            CtraMotionModel.Predict(ref x, step, out StateMatrix f);
            StateMatrix q = default;
            CtraMotionModel.AddProcessNoise(ref q, prior, step, _profile, stationary: false);
            var fDense = Matrix<double>.Build.Dense(N, N, (i, j) => f[(i * N) + j]);
            var qDense = Matrix<double>.Build.Dense(N, N, (i, j) => q[(i * N) + j]);
            double phi = Math.Exp(-step / _profile.GnssErrorTimeConstantS);
            foreach (int i in new[] { GnssErrorEastM, GnssErrorNorthM })
            {
                fDense[i, i] = phi;
                qDense[i, i] = _correlatedVarianceM2 * (1 - (phi * phi));
                x[i] = phi * _estimate.Mean[i];
            }

            GaussianEstimate predicted = DenseKalmanFilter.Predict(_estimate, fDense, qDense);
            _estimate = new GaussianEstimate(Vector<double>.Build.Dense(N, i => x[i]), predicted.Covariance);
            remaining -= step;
        }

        TimeUs = timeUs;
    }
}
