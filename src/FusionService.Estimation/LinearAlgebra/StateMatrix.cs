using System.Runtime.CompilerServices;

namespace FusionService.Estimation.LinearAlgebra;

/// <summary>
/// Fixed-size square matrix over the vehicle state (<see cref="Models.StateIndex.Count"/> rows and columns) stored
/// inline in row-major order (element (i, j) at i * <see cref="Size"/> + j): a covariance, a transition or a gain.
/// </summary>
[InlineArray(Length)]
public struct StateMatrix
{
    /// <summary>Number of rows and of columns.</summary>
    public const int Size = Models.StateIndex.Count;

    /// <summary>Number of elements.</summary>
    public const int Length = Size * Size;

    private double _element0;
}
