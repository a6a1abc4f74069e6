using FusionService.Estimation.Filtering;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using Xunit.Abstractions;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tests.Tracking;

public sealed class ReanchoringAndInputTests(ITestOutputHelper output)
{
    [Fact]
    public void Reanchoring_moves_the_plane_without_a_jump_in_the_output()
    {
        // Re-anchor every 500 m so a 7 km drive crosses many planes; the fused position must stay on the truth and
        // move smoothly (consecutive epochs differ by about speed x 1 s, never by a plane offset).
        var drive = SimpleDrive.Create(seed: 81, durationS: 700);
        // The drive's GNSS error is white: the filter is told so (WhiteGnssProfile).
        var track = new VehicleTrack(new TrackOptions { ReanchorRadiusM = 500 }, WhiteGnssProfile.DeliveryVan);
        var singlePlane = new VehicleTrack(new TrackOptions { ReanchorRadiusM = 1e7 }, WhiteGnssProfile.DeliveryVan);
        double worstDifferenceM = 0;
        var reference = new LocalTangentPlane(SimpleDrive.Origin);
        var truth = drive.Truth.ToDictionary(t => t.TimeUs, t => t.Truth);
        GeodeticPoint? previous = null;
        int anchors = 0;
        GeodeticPoint lastAnchor = default;
        double worstErrorM = 0, worstStepM = 0;
        foreach (Measurement m in drive.Measurements)
        {
            track.Process(m);
            singlePlane.Process(m);
            if (m.Kind != SensorKind.GnssPosition || track.Current.Phase != TrackPhase.Running)
            {
                continue;
            }

            if (!track.Current.Plane.Anchor.Equals(lastAnchor))
            {
                anchors++;
                lastAnchor = track.Current.Plane.Anchor;
            }

            GeodeticPoint p = TrackProcessor.PositionOf(track.Current);
            worstDifferenceM = Math.Max(worstDifferenceM, VincentyInverse.Compute(p, TrackProcessor.PositionOf(singlePlane.Current)).DistanceM);
            EnuPoint enu = reference.ToEnu(p);
            StateVector t = truth[m.TimeUs];
            worstErrorM = Math.Max(worstErrorM, Math.Sqrt(Math.Pow(enu.EastM - t[EastM], 2) + Math.Pow(enu.NorthM - t[NorthM], 2)));
            if (previous is GeodeticPoint q)
            {
                double stepM = VincentyInverse.Compute(q, p).DistanceM;
                worstStepM = Math.Max(worstStepM, Math.Abs(stepM - t[SpeedMps]));
            }

            previous = p;
        }

        output.WriteLine($"{anchors} planes; worst position error {worstErrorM:F2} m; worst |step - speed x 1 s| {worstStepM:F2} m; "
            + $"worst difference to a single-plane track {worstDifferenceM * 1000:F2} mm");

        // One plane over 7 km distorts by about d³ / (2 R²) = 4 mm (derived); re-anchoring must not add to that.
        Assert.True(worstDifferenceM < 0.02, $"re-anchored and single-plane tracks differ by {worstDifferenceM} m");
        Assert.True(anchors >= 8, $"only {anchors} planes used");
        Assert.True(worstErrorM < 6.0, $"worst error {worstErrorM} m");
        Assert.True(worstStepM < 3.0, $"worst step deviation {worstStepM} m");
    }

    [Theory]
    [InlineData(double.NaN, 8.0)]
    [InlineData(91.0, 8.0)]
    [InlineData(47.0, double.PositiveInfinity)]
    [InlineData(47.0, -180.5)]
    public void Gnss_fix_with_bad_coordinates_is_refused(double latDeg, double lonDeg)
    {
        var e = Assert.Throws<ArgumentOutOfRangeException>(() => Measurement.GnssPosition(0, 1, latDeg, lonDeg, 3.0));
        Assert.Contains("Deg", e.ParamName, StringComparison.Ordinal);
    }

    [Fact]
    public void Non_finite_or_out_of_range_sensor_values_are_refused_by_name()
    {
        Assert.Equal("sigmaM", Assert.Throws<ArgumentOutOfRangeException>(() => Measurement.GnssPosition(0, 1, 47, 8, 0)).ParamName);
        Assert.Equal("speedMps", Assert.Throws<ArgumentOutOfRangeException>(() => Measurement.WheelSpeed(0, 1, double.NaN)).ParamName);
        Assert.Equal("yawRateRps", Assert.Throws<ArgumentOutOfRangeException>(() => Measurement.Imu(0, 1, double.PositiveInfinity, 0)).ParamName);
        Assert.Equal("accelMps2", Assert.Throws<ArgumentOutOfRangeException>(() => Measurement.Imu(0, 1, 0, 99)).ParamName);
        Assert.Equal("messageKey", Assert.Throws<ArgumentOutOfRangeException>(() => Measurement.WheelSpeed(0, ulong.MaxValue, 1)).ParamName);
    }

    [Fact]
    public void A_covariance_that_is_not_positive_definite_raises_instead_of_returning_nan()
    {
        StateVector x = default;
        StateMatrix p = default;
        for (int i = 0; i < StateMatrix.Size; i++)
        {
            p[(i * StateMatrix.Size) + i] = 1;
        }

        p[(SpeedMps * StateMatrix.Size) + SpeedMps] = -1;
        StateVector copy = x;
        StateMatrix pCopy = p;
        var error = Assert.Throws<FilterDivergenceException>(() =>
            ExtendedKalmanFilter.UpdateJosephGated(ref copy, ref pCopy, [0.1], [0, 0, 0, 1, 0, 0, 0, 0, 0, 0], [0.0025], double.PositiveInfinity, out _));
        Assert.Contains("not positive definite", error.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Rejected_measurement_reports_nis_dimension_and_reason()
    {
        var outcome = new MeasurementOutcome(OutcomeKind.Gated, 57.2, 2, 16.2, false, 0);
        string reason = outcome.Describe(SensorKind.GnssPosition);
        Assert.Contains("57.20", reason, StringComparison.Ordinal);
        Assert.Contains("dimension 2", reason, StringComparison.Ordinal);
        Assert.Contains("16.20", reason, StringComparison.Ordinal);
    }
}
