using System.Runtime.InteropServices;

namespace FusionService.Estimation.Measurements;

/// <summary>
/// One sensor sample as the filter stores it (36 bytes, so that a 60 s window of a 21 Hz sensor suite fits in
/// about 45 KB). Build it with the factory methods, which validate and document the meaning of the three values per
/// <see cref="SensorKind"/>.
/// </summary>
/// <remarks>
/// The canonical processing order is (<see cref="TimeUs"/>, <see cref="Kind"/>, <see cref="MessageKey"/>), held as
/// two integers: the time and <see cref="OrderKey"/> (kind in the top 8 bits, message key in the low 56).
/// Two measurements with the same order and the same values are exact duplicates.
/// </remarks>
[StructLayout(LayoutKind.Sequential, Pack = 4)]
public readonly record struct Measurement
{
    /// <summary>Largest message key: keys have 56 bits (hash a client's message id down to them).</summary>
    public const ulong MaxMessageKey = (1UL << 56) - 1;

    private Measurement(long timeUs, ulong messageKey, double value0, double value1, float value2, SensorKind kind)
    {
        if (messageKey > MaxMessageKey)
        {
            throw new ArgumentOutOfRangeException(nameof(messageKey), messageKey, "message keys have 56 bits");
        }

        TimeUs = timeUs;
        OrderKey = OrderKeyOf(kind, messageKey);
        Value0 = value0;
        Value1 = value1;
        Value2 = value2;
    }

    /// <summary>Measurement time, microseconds since the Unix epoch (UTC).</summary>
    public long TimeUs { get; }

    /// <summary>Sensor kind (top 8 bits) and message key (low 56 bits): the second and third keys of the processing order in one integer.</summary>
    public ulong OrderKey { get; }

    /// <summary>Caller's 56-bit key of the message (for example a hash of its id); third key of the processing order.</summary>
    public ulong MessageKey => OrderKey & MaxMessageKey;

    /// <summary>Sensor kind.</summary>
    public SensorKind Kind => (SensorKind)(OrderKey >> 56);

    /// <summary>
    /// First stored value, for serialisers only (the inverse is <see cref="FromStored"/>); read a kind's values by name
    /// through <see cref="AsGnssFix"/>, <see cref="AsGnssVelocity"/>, <see cref="AsWheelSpeed"/> or <see cref="AsImu"/>.
    /// GnssPosition: latitude, degrees. GnssVelocity: speed over ground, m/s. WheelSpeed: speed, m/s. Imu: yaw rate, rad/s.
    /// </summary>
    public double Value0 { get; }

    /// <summary>
    /// Second stored value, for serialisers only (see <see cref="Value0"/>). GnssPosition: longitude, degrees.
    /// GnssVelocity: course over ground, radians clockwise from north (NaN when not usable). WheelSpeed: NaN.
    /// Imu: longitudinal acceleration, m/s^2 (NaN when absent).
    /// </summary>
    public double Value1 { get; }

    /// <summary>
    /// Third stored value, for serialisers only (see <see cref="Value0"/>). GnssPosition: 1-sigma per-axis horizontal
    /// accuracy, metres, negated when it was derived from HDOP × an assumed UERE rather than stated by the receiver
    /// (<see cref="GnssFixView.AccuracyFromHdop"/>; values stored before that mark existed are all positive).
    /// GnssVelocity: 1-sigma speed accuracy, m/s. Otherwise 0.
    /// </summary>
    public float Value2 { get; }

    /// <summary>
    /// The order key of <paramref name="kind"/> and <paramref name="messageKey"/>: the kind in the top 8 bits, the
    /// message key in the low 56 (see <see cref="OrderKey"/>). The one place that packs the two.
    /// </summary>
    /// <param name="kind">Sensor kind.</param>
    /// <param name="messageKey">Message key; bits above the 56th overlap the kind (callers keep it within <see cref="MaxMessageKey"/>).</param>
    public static ulong OrderKeyOf(SensorKind kind, ulong messageKey) => ((ulong)kind << 56) | messageKey;

    /// <summary>The values of a <see cref="SensorKind.GnssPosition"/> fix by name (the slots read as that kind; the caller checks <see cref="Kind"/>).</summary>
    public GnssFixView AsGnssFix() => new(Value0, Value1, Math.Abs(Value2), Value2 < 0);

    /// <summary>The values of a <see cref="SensorKind.GnssVelocity"/> measurement by name (the caller checks <see cref="Kind"/>).</summary>
    public GnssVelocityView AsGnssVelocity() => new(Value0, Value1, Value2);

    /// <summary>The value of a <see cref="SensorKind.WheelSpeed"/> measurement by name (the caller checks <see cref="Kind"/>).</summary>
    public WheelSpeedView AsWheelSpeed() => new(Value0);

    /// <summary>The values of an <see cref="SensorKind.Imu"/> sample by name (the caller checks <see cref="Kind"/>).</summary>
    public ImuView AsImu() => new(Value0, Value1);

    /// <summary>This measurement with another message key (same time, kind and values; nothing re-validated).</summary>
    /// <param name="messageKey">New message key, at most <see cref="MaxMessageKey"/>.</param>
    public Measurement WithMessageKey(ulong messageKey) => new(TimeUs, messageKey, Value0, Value1, Value2, Kind);

    /// <summary>
    /// Rebuilds a measurement from its stored fields (<see cref="TimeUs"/>, <see cref="OrderKey"/>, values) without
    /// re-validating the values: for data this type validated when it was first made.
    /// </summary>
    public static Measurement FromStored(long timeUs, ulong orderKey, double value0, double value1, float value2)
    {
        var kind = (SensorKind)(orderKey >> 56);
        if (!Enum.IsDefined(kind))
        {
            throw new ArgumentOutOfRangeException(nameof(orderKey), orderKey, "unknown sensor kind in the order key");
        }

        return new Measurement(timeUs, orderKey & MaxMessageKey, value0, value1, value2, kind);
    }

    /// <summary>A GNSS position fix.</summary>
    /// <param name="timeUs">Time, Unix microseconds.</param>
    /// <param name="messageKey">Caller's message key.</param>
    /// <param name="latitudeDeg">Latitude, degrees, in [-90, 90].</param>
    /// <param name="longitudeDeg">Longitude, degrees, in [-180, 180].</param>
    /// <param name="sigmaM">1-sigma per-axis horizontal accuracy, metres, positive (see <see cref="HorizontalAccuracy"/>).</param>
    /// <param name="sigmaFromHdop">Whether <paramref name="sigmaM"/> was derived from the fix's HDOP and an assumed UERE
    /// (<see cref="HorizontalAccuracy.FromHdop"/>) rather than stated by the receiver.</param>
    public static Measurement GnssPosition(long timeUs, ulong messageKey, double latitudeDeg, double longitudeDeg, double sigmaM, bool sigmaFromHdop = false)
    {
        RequireRange(latitudeDeg, -90, 90, nameof(latitudeDeg));
        RequireRange(longitudeDeg, -180, 180, nameof(longitudeDeg));
        RequirePositive(sigmaM, nameof(sigmaM));
        float stored = sigmaFromHdop ? -(float)sigmaM : (float)sigmaM;
        return new Measurement(timeUs, messageKey, latitudeDeg, longitudeDeg, stored, SensorKind.GnssPosition);
    }

    /// <summary>GNSS speed and course over ground.</summary>
    /// <param name="timeUs">Time, Unix microseconds.</param>
    /// <param name="messageKey">Caller's message key.</param>
    /// <param name="speedMps">Speed over ground, m/s, finite and non-negative.</param>
    /// <param name="courseRad">Course over ground, radians clockwise from true north; NaN when the receiver gave none.</param>
    /// <param name="speedSigmaMps">1-sigma speed accuracy, m/s, positive.</param>
    public static Measurement GnssVelocity(long timeUs, ulong messageKey, double speedMps, double courseRad, double speedSigmaMps)
    {
        RequireRange(speedMps, 0, 150, nameof(speedMps));
        if (double.IsInfinity(courseRad))
        {
            throw new ArgumentOutOfRangeException(nameof(courseRad), courseRad, "course must be finite or NaN (absent)");
        }

        RequirePositive(speedSigmaMps, nameof(speedSigmaMps));
        return new Measurement(timeUs, messageKey, speedMps, courseRad, (float)speedSigmaMps, SensorKind.GnssVelocity);
    }

    /// <summary>Wheel (odometer) speed.</summary>
    /// <param name="timeUs">Time, Unix microseconds.</param>
    /// <param name="messageKey">Caller's message key.</param>
    /// <param name="speedMps">Wheel speed, m/s, finite (non-negative for wheel sensors without direction).</param>
    public static Measurement WheelSpeed(long timeUs, ulong messageKey, double speedMps)
    {
        RequireRange(speedMps, -60, 150, nameof(speedMps));
        return new Measurement(timeUs, messageKey, speedMps, double.NaN, 0f, SensorKind.WheelSpeed);
    }

    /// <summary>Inertial sample.</summary>
    /// <param name="timeUs">Time, Unix microseconds.</param>
    /// <param name="messageKey">Caller's message key.</param>
    /// <param name="yawRateRps">Gyro yaw rate about the up axis, rad/s, positive counter-clockwise (left turn).</param>
    /// <param name="accelMps2">Longitudinal acceleration, m/s^2, or NaN when the sample has none.</param>
    public static Measurement Imu(long timeUs, ulong messageKey, double yawRateRps, double accelMps2)
    {
        RequireRange(yawRateRps, -10, 10, nameof(yawRateRps));
        if (!double.IsNaN(accelMps2))
        {
            RequireRange(accelMps2, -50, 50, nameof(accelMps2));
        }

        return new Measurement(timeUs, messageKey, yawRateRps, accelMps2, 0f, SensorKind.Imu);
    }

    private static void RequireRange(double value, double min, double max, string name)
    {
        if (!double.IsFinite(value) || value < min || value > max)
        {
            throw new ArgumentOutOfRangeException(name, value, $"must be finite and within [{min}, {max}]");
        }
    }

    private static void RequirePositive(double value, string name)
    {
        if (!double.IsFinite(value) || value <= 0)
        {
            throw new ArgumentOutOfRangeException(name, value, "must be finite and positive");
        }
    }
}
