namespace FusionService.Estimation.Tracking;

/// <summary>A GNSS fix remembered by the track, in its local plane.</summary>
/// <param name="IsSet">Whether a fix is held.</param>
/// <param name="TimeUs">Fix time, Unix microseconds.</param>
/// <param name="EastM">East, metres.</param>
/// <param name="NorthM">North, metres.</param>
/// <param name="SigmaM">1-sigma per-axis accuracy, metres.</param>
public readonly record struct HeldFix(bool IsSet, long TimeUs, double EastM, double NorthM, double SigmaM);
