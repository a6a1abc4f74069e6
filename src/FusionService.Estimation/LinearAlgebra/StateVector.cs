using System.Runtime.CompilerServices;

namespace FusionService.Estimation.LinearAlgebra;

/// <summary>Fixed-size vector over the vehicle state (<see cref="Models.StateIndex.Count"/> doubles) stored inline (no heap allocation).</summary>
[InlineArray(Length)]
public struct StateVector
{
    /// <summary>Number of elements.</summary>
    public const int Length = Models.StateIndex.Count;

    private double _element0;
}
