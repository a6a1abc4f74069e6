// Ground truth about one generated measurement.
using FusionService.Estimation.Measurements;

namespace FusionService.Scenarios;

/// <summary>What the generator knows about one measurement it produced (for tests counting rejections and errors).</summary>
/// <param name="MessageKey">The measurement's message key.</param>
/// <param name="Kind">The measurement's kind.</param>
/// <param name="TimeUs">The measurement's time, Unix microseconds.</param>
/// <param name="IsOutlier">GNSS position only: the fix is an outlier jump.</param>
/// <param name="InUrbanCanyon">The measurement time lies in an urban-canyon span (GNSS position errors degraded).</param>
/// <param name="ErrorEastM">GNSS position only: east error actually applied (measured minus true), metres; otherwise 0.</param>
/// <param name="ErrorNorthM">GNSS position only: north error actually applied, metres; otherwise 0.</param>
/// <param name="NoiseFreeValue0">
/// The noise-free reading of Value0: true latitude (degrees), true speed (m/s, unsigned), true speed x scale (m/s) or
/// true yaw rate + bias (rad/s), by kind.
/// </param>
/// <param name="NoiseFreeValue1">
/// The noise-free reading of Value1: true longitude (degrees), true course of motion (radians clockwise from north,
/// in [0, 2π)), NaN for wheel speed, or true acceleration (m/s², NaN without accelerometer), by kind.
/// </param>
/// <param name="InMultipath">The measurement time lies in a multipath episode (GNSS position fixes other than outliers carry its bias).</param>
/// <param name="IsCarried">The measurement time lies in a carried span (wheel and IMU read a standstill while the truth moves).</param>
/// <param name="CorrelatedErrorEastM">GNSS position only: the time-correlated (Gauss-Markov) part of <paramref name="ErrorEastM"/>, metres; 0 when none was applied (option off, outlier, urban canyon).</param>
/// <param name="CorrelatedErrorNorthM">GNSS position only: the time-correlated part of <paramref name="ErrorNorthM"/>, metres; 0 when none was applied.</param>
public readonly record struct MeasurementTruth(
    ulong MessageKey,
    SensorKind Kind,
    long TimeUs,
    bool IsOutlier,
    bool InUrbanCanyon,
    double ErrorEastM,
    double ErrorNorthM,
    double NoiseFreeValue0,
    double NoiseFreeValue1,
    bool InMultipath = false,
    bool IsCarried = false,
    double CorrelatedErrorEastM = 0.0,
    double CorrelatedErrorNorthM = 0.0);
