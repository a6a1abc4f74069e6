// Fused states: binary COPY in, Dapper out, covariance array, newest per vehicle.
using FusionService.Storage.FusedStates;
using FusionService.Storage.Partitions;
using FusionService.Storage.Tests.Infrastructure;
using Npgsql;

namespace FusionService.Storage.Tests.FusedStates;

[Collection(PostgresCollection.Name)]
public sealed class FusedStateStoreTests(PostgresFixture server)
{
    private static readonly Guid Fleet = Guid.Parse("0195a0c1-0000-7000-8000-0000000000f1");

    [Fact]
    public async Task Copy_round_trip_keeps_every_value_and_the_packed_covariance()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(TestTimes.Day, TestTimes.Day);
        var t = TestTimes.At(TestTimes.Day, 6, 30, 0, 1);
        FusedStateRow[] rows =
        [
            State("van-1", t, seed: 1),
            State("van-1", t + 999_999, seed: 2) with { HeadingRad = -Math.PI, LatDeg = -90, LonDeg = 180 },
            // Covariance given as a slice of a larger array: the writer must copy exactly the 36 values.
            State("van-1", t + 1_000_000, seed: 3) with { Covariance = new ReadOnlyMemory<double>(Packed(4, extra: 5), 5, 36) },
        ];

        await using (var connection = await schema.OpenAsync())
        {
            Assert.Equal(3UL, await FusedStateWriter.WriteAsync(connection, null, rows));
        }

        var read = await new FusedStateRepository(schema.DataSource).ReadAsync(Fleet, "van-1", t, t + 2_000_000);

        Assert.Equal(rows.Length, read.Count);
        for (var i = 0; i < rows.Length; i++)
        {
            AssertSameState(rows[i], read[i], i);
        }
    }

    [Fact]
    public async Task Latest_states_give_the_newest_row_of_each_vehicle_of_the_fleet_only()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(TestTimes.Day, TestTimes.Day.AddDays(1));
        var t = TestTimes.At(TestTimes.Day, 22, 0, 0, 0);
        await using (var connection = await schema.OpenAsync())
        {
            await FusedStateWriter.WriteAsync(connection, null,
            [
                State("van-b", t, 1),
                State("van-b", t + 7_200_000_000L, 2), // next UTC day, other partition
                State("van-a", t + 5, 3),
                State("van-a", t + 4, 4),
                State("van-c", t + 100, 5) with { FleetId = Guid.Parse("0195a0c1-0000-7000-8000-0000000000f2") },
            ]);
        }

        var latest = await new FusedStateRepository(schema.DataSource).LatestFusedStatesAsync(Fleet);

        Assert.Equal([("van-a", t + 5), ("van-b", t + 7_200_000_000L)], latest.Select(s => (s.VehicleId, s.TimeUs)));
        AssertSameState(State("van-a", t + 5, 3), latest[0], 0);
    }

    [Fact]
    public async Task A_covariance_of_the_wrong_length_is_refused_before_copy()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        await using var connection = await schema.OpenAsync();
        var bad = State("van-1", TestTimes.DayStartUs, 1) with { Covariance = new double[35] };

        var error = await Assert.ThrowsAsync<ArgumentException>(() => FusedStateWriter.WriteAsync(connection, null, [bad]));

        Assert.Contains("36", error.Message, StringComparison.Ordinal);
    }

    [Fact]
    public async Task The_schema_refuses_a_minor_axis_longer_than_the_major_axis()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        await new PartitionMaintainer(schema.DataSource).EnsurePartitionsAsync(TestTimes.Day, TestTimes.Day);
        await using var connection = await schema.OpenAsync();
        var bad = State("van-1", TestTimes.DayStartUs, 1) with { EllipseMajorM = 1.0, EllipseMinorM = 2.0 };

        var error = await Assert.ThrowsAsync<PostgresException>(() => FusedStateWriter.WriteAsync(connection, null, [bad]));

        Assert.Equal(PostgresErrorCodes.CheckViolation, error.SqlState);
        Assert.Equal("fused_states_ellipse_axes_ordered", error.ConstraintName);
    }

    private static FusedStateRow State(string vehicle, long timeUs, int seed) => new(
        Fleet, vehicle, timeUs,
        LatDeg: 48.1 + (seed * 1e-7), LonDeg: 11.5 - (seed * 1e-7), HeadingRad: 0.1 * seed, SpeedMps: 8.25 + seed,
        YawRateRps: -0.01 * seed, AccelMps2: 0.3, GyroBiasRps: 1.7e-4, WheelScale: 1.0125,
        Covariance: Packed(seed, extra: 0), EllipseMajorM: 2.5 + seed, EllipseMinorM: 1.25, EllipseOrientationRad: 0.7);

    // 36 distinct values, optionally after `extra` leading values that are not part of the covariance.
    private static double[] Packed(int seed, int extra)
    {
        var values = new double[extra + 36];
        for (var i = 0; i < values.Length; i++)
        {
            values[i] = i < extra ? double.NaN : (seed + 1) * Math.Pow(10, -(i - extra) / 4.0) / 3.0;
        }

        return values;
    }

    private static void AssertSameState(FusedStateRow expected, FusedStateRow actual, int index)
    {
        var at = "state " + index.ToString(System.Globalization.CultureInfo.InvariantCulture) + " ";
        Assert.Equal(expected.FleetId, actual.FleetId);
        Assert.Equal(expected.VehicleId, actual.VehicleId);
        Assert.Equal(expected.TimeUs, actual.TimeUs);
        AssertBits.Equal(expected.LatDeg, actual.LatDeg, at + "lat_deg");
        AssertBits.Equal(expected.LonDeg, actual.LonDeg, at + "lon_deg");
        AssertBits.Equal(expected.HeadingRad, actual.HeadingRad, at + "heading_rad");
        AssertBits.Equal(expected.SpeedMps, actual.SpeedMps, at + "speed_mps");
        AssertBits.Equal(expected.YawRateRps, actual.YawRateRps, at + "yaw_rate_rps");
        AssertBits.Equal(expected.AccelMps2, actual.AccelMps2, at + "accel_mps2");
        AssertBits.Equal(expected.GyroBiasRps, actual.GyroBiasRps, at + "gyro_bias_rps");
        AssertBits.Equal(expected.WheelScale, actual.WheelScale, at + "wheel_scale");
        Assert.Equal(36, actual.Covariance.Length);
        for (var k = 0; k < 36; k++)
        {
            AssertBits.Equal(expected.Covariance.Span[k], actual.Covariance.Span[k], at + "covariance[" + k.ToString(System.Globalization.CultureInfo.InvariantCulture) + "]");
        }

        AssertBits.Equal(expected.EllipseMajorM, actual.EllipseMajorM, at + "ellipse_major_m");
        AssertBits.Equal(expected.EllipseMinorM, actual.EllipseMinorM, at + "ellipse_minor_m");
        AssertBits.Equal(expected.EllipseOrientationRad, actual.EllipseOrientationRad, at + "ellipse_orientation_rad");
    }
}
