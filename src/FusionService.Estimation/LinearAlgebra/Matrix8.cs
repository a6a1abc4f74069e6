using System.Runtime.CompilerServices;

namespace FusionService.Estimation.LinearAlgebra;

/// <summary>Fixed-size 8 x 8 matrix of doubles stored inline in row-major order (element (i, j) at i * 8 + j).</summary>
[InlineArray(Length)]
public struct Matrix8
{
    /// <summary>Number of rows and of columns.</summary>
    public const int Size = 8;

    /// <summary>Number of elements.</summary>
    public const int Length = Size * Size;

    private double _element0;
}
