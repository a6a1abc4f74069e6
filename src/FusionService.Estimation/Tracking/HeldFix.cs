namespace FusionService.Estimation.Tracking;

/// <summary>A GNSS fix remembered by the track, in its local plane.</summary>
/// <param name="IsSet">Whether a fix is held.</param>
/// <param name="TimeUs">Fix time, Unix microseconds.</param>
/// <param name="EastM">East, metres.</param>
/// <param name="NorthM">North, metres.</param>
/// <param name="SigmaM">1-sigma per-axis accuracy, metres.</param>
/// <param name="Confirmed">
/// Before the track runs: a later fix has agreed with this one, so it is not a lone jump and a start may use it.
/// </param>
public readonly record struct HeldFix(bool IsSet, long TimeUs, double EastM, double NorthM, double SigmaM, bool Confirmed = false);
