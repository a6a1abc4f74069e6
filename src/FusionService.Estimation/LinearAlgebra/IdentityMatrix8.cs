namespace FusionService.Estimation.LinearAlgebra;

/// <summary>The 8 x 8 identity, made once (copying it is cheaper than building it per step).</summary>
internal static class IdentityMatrix8
{
    /// <summary>The identity matrix; read-only by convention (copy before changing it).</summary>
    internal static readonly Matrix8 Value = Make();

    private static Matrix8 Make()
    {
        Matrix8 identity = default;
        for (int i = 0; i < Matrix8.Size; i++)
        {
            identity[(i * Matrix8.Size) + i] = 1.0;
        }

        return identity;
    }
}
