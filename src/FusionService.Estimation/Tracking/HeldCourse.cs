namespace FusionService.Estimation.Tracking;

/// <summary>A GNSS course remembered while the track waits for its first position.</summary>
/// <param name="IsSet">Whether a course is held.</param>
/// <param name="TimeUs">Time, Unix microseconds.</param>
/// <param name="HeadingRad">Heading in the filter's convention (from east, counter-clockwise).</param>
/// <param name="HeadingSigmaRad">1-sigma heading accuracy, radians.</param>
/// <param name="SpeedMps">Speed over ground, m/s.</param>
/// <param name="SpeedSigmaMps">1-sigma speed accuracy, m/s.</param>
public readonly record struct HeldCourse(bool IsSet, long TimeUs, double HeadingRad, double HeadingSigmaRad, double SpeedMps, double SpeedSigmaMps);
