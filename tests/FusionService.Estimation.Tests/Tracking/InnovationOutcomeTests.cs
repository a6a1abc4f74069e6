// Outcomes carry the innovation the update formed, its dimension and the position shift (issue 4, explanations).
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Tracking;

public sealed class InnovationOutcomeTests
{
    /// <summary>
    /// Every innovation equals z - h(x̂⁻) recomputed here from the predicted state the recorder saw (measurement models of
    /// docs/estimation.md); the GNSS position NIS equals νᵀ (P⁻ + σ² I)⁻¹ ν with the 2 x 2 inverse written out
    /// (definition of the NIS, Bar-Shalom, Li and Kirubarajan 2001; derived); a fused update moves the position by
    /// |x̂⁺ - x̂⁻| and a gated one by exactly 0.
    /// </summary>
    [Fact]
    public void Issue4_innovation_dimension_and_shift_match_a_recomputation_from_the_prediction()
    {
        var drive = SimpleDrive.Create(seed: 7, durationS: 150, outlierProbability: 0.05);
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        var recorder = new Capture();
        TrackState state = TrackState.Empty;
        int checkedGnss = 0, gated = 0, other = 0;
        foreach (var m in drive.Measurements)
        {
            recorder.Predictions = 0;
            MeasurementOutcome outcome = processor.Process(ref state, m, recorder);
            if (outcome.Dimension == 0)
            {
                Assert.True(double.IsNaN(outcome.Innovation0) && double.IsNaN(outcome.Innovation1), "no innovation without a dimension");
                continue;
            }

            Assert.Equal(1, recorder.Predictions);
            Assert.Equal(processor.InnovationDimension(m), outcome.Dimension);
            StateVector prior = recorder.PriorX;
            (double e0, double e1) = Expected(processor, m, prior, recorder.Plane);
            AssertNear.Equal(e0, outcome.Innovation0, 1e-9, "innovation component 0 (m, m/s or rad/s)");
            if (outcome.Dimension == 2)
            {
                AssertNear.Equal(e1, outcome.Innovation1, 1e-9, "innovation component 1 (m, rad or m/s^2)");
            }
            else
            {
                Assert.True(double.IsNaN(outcome.Innovation1), "second component of a 1-D innovation must be NaN");
            }

            double de = recorder.PosteriorX[EastM] - prior[EastM], dn = recorder.PosteriorX[NorthM] - prior[NorthM];
            if (outcome.Kind == OutcomeKind.Gated)
            {
                Assert.Equal(0.0, outcome.PositionShiftM);
                Assert.Equal(0.0, Math.Sqrt((de * de) + (dn * dn)));
                gated++;
            }
            else if (outcome.Kind == OutcomeKind.Accepted)
            {
                AssertNear.Equal(Math.Sqrt((de * de) + (dn * dn)), outcome.PositionShiftM, 1e-9, "position shift (m)");
            }

            if (m.Kind == SensorKind.GnssPosition)
            {
                // H = [I I] over (position, correlated GNSS error), R the white share of the reported variance:
                // S = Ppp + Ppe + Pep + Pee + R (docs/estimation.md; derived).
                StateMatrix p = recorder.PriorP;
                double r = (1 - processor.Profile.GnssCorrelatedFraction) * m.Value2 * (double)m.Value2;
                int ee = GnssErrorEastM, en = GnssErrorNorthM;
                double a = p[0] + (2 * p[ee]) + p[(ee * N) + ee] + r;
                double b = p[1] + p[en] + p[(ee * N) + NorthM] + p[(ee * N) + en];
                double c = p[N + 1] + (2 * p[N + en]) + p[(en * N) + en] + r;
                double det = (a * c) - (b * b);
                double nis = ((c * e0 * e0) - (2 * b * e0 * e1) + (a * e1 * e1)) / det;
                AssertNear.Equal(nis, outcome.Nis, 1e-9 * Math.Max(1, nis), "GNSS position NIS (dimensionless)");

                // Whitened innovation L⁻¹ ν with S = [[a, b], [b, c]] = L Lᵀ written out (Cholesky of a 2 x 2; derived).
                double l11 = Math.Sqrt(a), l21 = b / l11, l22 = Math.Sqrt(c - (l21 * l21));
                AssertNear.Equal(e0 / l11, outcome.Whitened0, 1e-9 * Math.Max(1, Math.Abs(e0 / l11)), "whitened east (dimensionless)");
                AssertNear.Equal((e1 - (l21 * e0 / l11)) / l22, outcome.Whitened1, 1e-9 * Math.Max(1, Math.Abs(outcome.Whitened1)), "whitened north (dimensionless)");
                AssertNear.AtMost(Math.Sqrt((e0 * e0) + (e1 * e1)), outcome.PositionShiftM, 1e-9, "a position fix moves the estimate less than its residual (m)");
                checkedGnss++;
            }
            else
            {
                if (outcome.Dimension == 1)
                {
                    // A 1-D whitened innovation is ν / sqrt(S): its square is the NIS and its sign the innovation's (derived).
                    AssertNear.Equal(outcome.Nis, outcome.Whitened0 * outcome.Whitened0, 1e-9 * Math.Max(1, outcome.Nis), "whitened² = NIS (dimensionless)");
                    Assert.Equal(Math.Sign(outcome.Innovation0), Math.Sign(outcome.Whitened0));
                    Assert.True(double.IsNaN(outcome.Whitened1), "second whitened component of a 1-D innovation must be NaN");
                }

                other++;
            }
        }

        Assert.True(checkedGnss > 100, $"only {checkedGnss} GNSS fixes checked");
        Assert.True(gated > 0, "the drive's injected jumps must be gated");
        Assert.True(other > 1000, $"only {other} motion samples checked");
    }

    private const int N = StateMatrix.Size;

    private static (double, double) Expected(TrackProcessor processor, in Measurement m, in StateVector x, LocalTangentPlane plane)
    {
        switch (m.Kind)
        {
            case SensorKind.GnssPosition:
                EnuPoint enu = plane.ToEnu(GeodeticPoint.FromDegrees(m.Value0, m.Value1));
                return (enu.EastM - (x[EastM] + x[GnssErrorEastM]), enu.NorthM - (x[NorthM] + x[GnssErrorNorthM]));
            case SensorKind.GnssVelocity:
                double heading = processor.InnovationDimension(m) == 2 ? Angles.WrapPi(TrackProcessor.CourseToHeading(m.Value1) - x[HeadingRad]) : double.NaN;
                return (m.Value0 - x[SpeedMps], heading);
            case SensorKind.WheelSpeed:
                return (m.Value0 - (x[SpeedMps] * x[WheelScale]), double.NaN);
            default:
                return (m.Value0 - (x[YawRateRps] + x[GyroBiasRps]), m.Value1 - x[AccelMps2]);
        }
    }

    private sealed class Capture : IStepRecorder
    {
        public int Predictions;
        public StateVector PriorX;
        public StateMatrix PriorP;
        public StateVector PosteriorX;
        public LocalTangentPlane Plane;

        public void Start(long timeUs, in StateVector x, in StateMatrix p, in LocalTangentPlane plane) => Plane = plane;

        public void Predicted(in StateMatrix f, in StateVector xPredicted, in StateMatrix pPredicted)
        {
            Predictions++;
            PriorX = xPredicted;
            PriorP = pPredicted;
        }

        public void Posterior(long timeUs, in StateVector x, in StateMatrix p, in LocalTangentPlane plane)
        {
            PosteriorX = x;
            Plane = plane;
        }
    }
}
