namespace FusionService.Estimation.Diagnostics;

/// <summary>A gap between two consecutive GNSS position fixes while the vehicle moved (see <see cref="GnssOutageDetector"/>).</summary>
/// <param name="FromUs">Time of the fix before the gap, Unix microseconds.</param>
/// <param name="ToUs">Time of the fix after the gap, Unix microseconds.</param>
public readonly record struct GnssOutage(long FromUs, long ToUs)
{
    /// <summary>Length of the gap, seconds.</summary>
    public double DurationS => (ToUs - FromUs) / 1e6;
}
