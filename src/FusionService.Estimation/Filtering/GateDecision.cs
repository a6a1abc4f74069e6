namespace FusionService.Estimation.Filtering;

/// <summary>What the chi-square gate of <see cref="ExtendedKalmanFilter.UpdateJosephGated(ref LinearAlgebra.StateVector, ref LinearAlgebra.StateMatrix, ReadOnlySpan{double}, ReadOnlySpan{double}, ReadOnlySpan{double}, double, out double)"/> decided.</summary>
public enum GateDecision
{
    /// <summary>The NIS was at or below the threshold: the update was applied to the state and covariance.</summary>
    Accepted = 0,

    /// <summary>The NIS exceeded the threshold: state and covariance were left unchanged.</summary>
    Rejected = 1,
}
