using System.Runtime.CompilerServices;

namespace FusionService.Estimation.LinearAlgebra;

/// <summary>Fixed-size vector of eight doubles stored inline (no heap allocation); the vehicle state vector.</summary>
[InlineArray(Length)]
public struct Vector8
{
    /// <summary>Number of elements.</summary>
    public const int Length = 8;

    private double _element0;
}
