// Turns core measurements into ingest messages.
using System.Globalization;
using FusionService.Estimation.Measurements;
using FusionService.Scenarios;

namespace FusionService.Simulator.Messages;

/// <summary>
/// Maps the estimation core's <see cref="Measurement"/>s to <see cref="TelemetryMessage"/>s: a GnssPosition and the
/// GnssVelocity of the same time become one gnss message (a velocity without a position at its time is dropped: the
/// API has no velocity-only message); radians become degrees; a NaN course or acceleration is left out.
/// Message ids are "{vehicle}/{kind}/{n}" with n the running number of the measurement of that kind (the low 48 bits of
/// the generator's message key), so a resent measurement keeps its id.
/// </summary>
public static class TelemetryMessages
{
    private const ulong CountMask = (1UL << 48) - 1;

    /// <summary>Messages of <paramref name="measurements"/>, in their order.</summary>
    /// <param name="vehicleId">Vehicle id to put into every message.</param>
    /// <param name="measurements">Measurements in canonical order (a position directly followed by its velocity).</param>
    public static IReadOnlyList<TelemetryMessage> FromMeasurements(string vehicleId, IReadOnlyList<Measurement> measurements)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        ArgumentNullException.ThrowIfNull(measurements);
        var result = new List<TelemetryMessage>(measurements.Count);
        Append(vehicleId, measurements, 0, measurements.Count, result);
        return result;
    }

    /// <summary>
    /// The uploads of <paramref name="schedule"/> as batches of messages, in arrival order: consecutive arrivals with the same
    /// arrival time, batch number and retry flag form one batch.
    /// </summary>
    /// <param name="vehicleId">Vehicle id to put into every message.</param>
    /// <param name="schedule">Arrival schedule from <see cref="Uploader.Upload"/>.</param>
    public static IReadOnlyList<TelemetryBatch> ToBatches(string vehicleId, ArrivalSchedule schedule)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        ArgumentNullException.ThrowIfNull(schedule);
        var batches = new List<TelemetryBatch>();
        var arrivals = schedule.Arrivals;
        var group = new List<Measurement>();
        int first = 0;
        while (first < arrivals.Count)
        {
            MeasurementArrival head = arrivals[first];
            int end = first;
            group.Clear();
            while (end < arrivals.Count && arrivals[end].ArrivalTimeUs == head.ArrivalTimeUs && arrivals[end].BatchIndex == head.BatchIndex
                && arrivals[end].IsRetryCopy == head.IsRetryCopy)
            {
                group.Add(arrivals[end].Measurement);
                end++;
            }

            var messages = new List<TelemetryMessage>(group.Count);
            Append(vehicleId, group, 0, group.Count, messages);
            batches.Add(new TelemetryBatch(vehicleId, head.ArrivalTimeUs, head.BatchIndex, head.IsRetryCopy, messages));
            first = end;
        }

        return batches;
    }

    /// <summary>The message id of a measurement: "{vehicle}/{kind}/{n}".</summary>
    /// <param name="vehicleId">Vehicle id.</param>
    /// <param name="measurement">The measurement (for gnss, the position).</param>
    public static string MessageId(string vehicleId, Measurement measurement)
    {
        string kind = measurement.Kind switch
        {
            SensorKind.GnssPosition or SensorKind.GnssVelocity => TelemetryKinds.Gnss,
            SensorKind.WheelSpeed => TelemetryKinds.Wheel,
            _ => TelemetryKinds.Imu,
        };
        return string.Create(CultureInfo.InvariantCulture, $"{vehicleId}/{kind}/{measurement.MessageKey & CountMask}");
    }

    // The float accuracy read back as the shortest decimal that names it (0.1f -> 0.1, not 0.10000000149011612).
    private static double FromFloat(float value) => double.Parse(value.ToString("R", CultureInfo.InvariantCulture), CultureInfo.InvariantCulture);

    private static double Degrees(double rad) => rad * (180.0 / Math.PI);

    private static void Append(string vehicleId, IReadOnlyList<Measurement> ms, int first, int end, List<TelemetryMessage> output)
    {
        for (int i = first; i < end; i++)
        {
            Measurement m = ms[i];
            switch (m.Kind)
            {
                case SensorKind.GnssPosition:
                    GnssFixView fix = m.AsGnssFix();
                    var gnss = new TelemetryMessage(vehicleId, TelemetryKinds.Gnss, m.TimeUs, MessageId(vehicleId, m))
                    {
                        LatDeg = fix.LatitudeDeg,
                        LonDeg = fix.LongitudeDeg,
                        AccuracyM = FromFloat(fix.AccuracyM),
                        AccuracyKind = TelemetryKinds.OneSigma,
                    };
                    if (i + 1 < end && ms[i + 1].Kind == SensorKind.GnssVelocity && ms[i + 1].TimeUs == m.TimeUs)
                    {
                        GnssVelocityView v = ms[++i].AsGnssVelocity();
                        gnss = gnss with
                        {
                            SpeedMps = v.SpeedMps,
                            CourseDeg = v.HasCourse ? Degrees(v.CourseRad) : null,
                            SpeedAccuracyMps = FromFloat(v.SpeedAccuracyMps),
                        };
                    }

                    output.Add(gnss);
                    break;
                case SensorKind.WheelSpeed:
                    output.Add(new TelemetryMessage(vehicleId, TelemetryKinds.Wheel, m.TimeUs, MessageId(vehicleId, m)) { SpeedMps = m.AsWheelSpeed().SpeedMps });
                    break;
                case SensorKind.Imu:
                    output.Add(new TelemetryMessage(vehicleId, TelemetryKinds.Imu, m.TimeUs, MessageId(vehicleId, m))
                    {
                        YawRateDps = Degrees(m.AsImu().YawRateRps),
                        AccelMps2 = m.AsImu().HasAccel ? m.AsImu().AccelMps2 : null,
                    });
                    break;
                default:
                    // A velocity without a position at its time: the API carries speed and course only inside a gnss fix.
                    break;
            }
        }
    }
}
