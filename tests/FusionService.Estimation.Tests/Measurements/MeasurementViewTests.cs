// A measurement's named views give back the values its factory was given.
using FusionService.Estimation.Measurements;

namespace FusionService.Estimation.Tests.Measurements;

public sealed class MeasurementViewTests
{
    [Fact]
    public void Views_name_the_values_of_each_kind()
    {
        GnssFixView fix = Measurement.GnssPosition(1_000, 7, 52.5, 13.4, 2.5).AsGnssFix();
        Assert.Equal((52.5, 13.4, 2.5f), (fix.LatitudeDeg, fix.LongitudeDeg, fix.AccuracyM));

        GnssVelocityView velocity = Measurement.GnssVelocity(1_000, 7, 12.0, 0.5, 0.25).AsGnssVelocity();
        Assert.Equal((12.0, 0.5, 0.25f, true), (velocity.SpeedMps, velocity.CourseRad, velocity.SpeedAccuracyMps, velocity.HasCourse));
        Assert.False(Measurement.GnssVelocity(1_000, 7, 0.1, double.NaN, 0.25).AsGnssVelocity().HasCourse);

        Assert.Equal(-1.5, Measurement.WheelSpeed(1_000, 7, -1.5).AsWheelSpeed().SpeedMps);

        ImuView imu = Measurement.Imu(1_000, 7, 0.125, -0.75).AsImu();
        Assert.Equal((0.125, -0.75, true), (imu.YawRateRps, imu.AccelMps2, imu.HasAccel));
        Assert.False(Measurement.Imu(1_000, 7, 0.125, double.NaN).AsImu().HasAccel);
    }

    [Fact]
    public void Order_key_packs_kind_above_the_message_key()
    {
        var m = Measurement.WheelSpeed(1_000, Measurement.MaxMessageKey, 3.0);
        Assert.Equal(m.OrderKey, Measurement.OrderKeyOf(SensorKind.WheelSpeed, Measurement.MaxMessageKey));
        Assert.Equal(((ulong)SensorKind.WheelSpeed << 56) | 42UL, Measurement.OrderKeyOf(SensorKind.WheelSpeed, 42));

        Measurement rekeyed = m.WithMessageKey(42);
        Assert.Equal((SensorKind.WheelSpeed, 42UL, m.TimeUs, 3.0), (rekeyed.Kind, rekeyed.MessageKey, rekeyed.TimeUs, rekeyed.AsWheelSpeed().SpeedMps));
    }
}
