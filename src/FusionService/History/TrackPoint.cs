// One point of a track history response.
namespace FusionService.History;

/// <summary>One point of a track, in the units of the API.</summary>
/// <param name="TimeUs">Time, Unix microseconds.</param>
/// <param name="LatDeg">WGS-84 latitude, degrees.</param>
/// <param name="LonDeg">WGS-84 longitude, degrees.</param>
/// <param name="HeadingDeg">Heading (course), degrees clockwise from north in [0, 360); null when unknown (a raw fix without a course).</param>
/// <param name="SpeedMps">Speed, m/s; null when unknown.</param>
/// <param name="SemiMajorM">95 % ellipse semi-major axis, metres.</param>
/// <param name="SemiMinorM">95 % ellipse semi-minor axis, metres.</param>
/// <param name="OrientationDeg">Ellipse major-axis direction, degrees clockwise from north, in (-90, 90].</param>
/// <param name="Segment">Index of the continuous piece of track the point belongs to: smoothing does not cross from one to the next. A track reset, a carry, an isolated sensor stream and dropped GNSS error estimates (a multipath episode ended) each start a new one.</param>
/// <param name="Outcome">Raw fixes only: the live filter's verdict (snake_case name), else null.</param>
/// <param name="Nis">Raw fixes only: normalised innovation squared, or null.</param>
/// <param name="AccuracyM">Raw fixes only: the fix's 1-sigma per-axis horizontal accuracy, metres, or null.</param>
/// <param name="TrackReset">Raw fixes only: whether the fix restarted the track, else null.</param>
public readonly record struct TrackPoint(
    long TimeUs,
    double LatDeg,
    double LonDeg,
    double? HeadingDeg,
    double? SpeedMps,
    double SemiMajorM,
    double SemiMinorM,
    double OrientationDeg,
    int Segment,
    string? Outcome = null,
    double? Nis = null,
    double? AccuracyM = null,
    bool? TrackReset = null);
