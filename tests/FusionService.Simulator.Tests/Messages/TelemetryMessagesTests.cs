using FusionService.Estimation.Measurements;
using FusionService.Simulator.Messages;

namespace FusionService.Simulator.Tests.Messages;

/// <summary>How core measurements become ingest messages.</summary>
public sealed class TelemetryMessagesTests
{
    private const long T0 = 1_796_198_400_000_000;

    [Fact]
    public void Position_and_velocity_of_one_time_become_one_gnss_message_with_the_course_in_degrees()
    {
        Measurement[] ms =
        [
            Measurement.GnssPosition(T0, 0, 46.1, 8.4, 3.0),
            Measurement.GnssVelocity(T0, (1UL << 48) | 0, 10.0, Math.PI / 2, 0.1),
            Measurement.WheelSpeed(T0, (2UL << 48) | 5, 10.3),
            Measurement.Imu(T0, (3UL << 48) | 6, Math.PI / 180.0, double.NaN),
        ];
        IReadOnlyList<TelemetryMessage> messages = TelemetryMessages.FromMeasurements("van-09", ms);
        Assert.Equal(3, messages.Count);
        TelemetryMessage gnss = messages[0];
        Assert.Equal(("gnss", "van-09/gnss/0", 46.1, 8.4, 3.0, "one_sigma"), (gnss.Kind, gnss.Id, gnss.LatDeg!.Value, gnss.LonDeg!.Value, gnss.AccuracyM!.Value, gnss.AccuracyKind));
        Assert.Equal(10.0, gnss.SpeedMps);
        // pi/2 rad clockwise from north = 90 deg (definition of the degree); 1e-12 deg of rounding allowed.
        AssertNear.Equal(90.0, gnss.CourseDeg!.Value, 1e-12, "course (deg)");
        Assert.Equal(0.1, gnss.SpeedAccuracyMps);
        Assert.Equal(("wheel", "van-09/wheel/5", 10.3), (messages[1].Kind, messages[1].Id, messages[1].SpeedMps!.Value));
        Assert.Equal(("imu", "van-09/imu/6"), (messages[2].Kind, messages[2].Id));
        AssertNear.Equal(1.0, messages[2].YawRateDps!.Value, 1e-12, "yaw rate (deg/s)");
        Assert.Null(messages[2].AccelMps2);
    }

    [Fact]
    public void Absent_course_is_left_out_and_a_velocity_without_position_is_dropped()
    {
        Measurement[] ms =
        [
            Measurement.GnssPosition(T0, 0, 46.1, 8.4, 3.0),
            Measurement.GnssVelocity(T0, (1UL << 48) | 0, 0.2, double.NaN, 0.1),
            Measurement.GnssVelocity(T0 + 1_000_000, (1UL << 48) | 1, 5.0, 1.0, 0.1),
        ];
        IReadOnlyList<TelemetryMessage> messages = TelemetryMessages.FromMeasurements("van-01", ms);
        TelemetryMessage only = Assert.Single(messages);
        Assert.Equal(0.2, only.SpeedMps);
        Assert.Null(only.CourseDeg);
        Assert.DoesNotContain("course_deg", TelemetryJson.Serialize(only), StringComparison.Ordinal);
    }
}
