namespace FusionService.Estimation.LinearAlgebra;

/// <summary>The identity over the state, made once (copying it is cheaper than building it per step).</summary>
internal static class StateIdentity
{
    /// <summary>The identity matrix; read-only by convention (copy before changing it).</summary>
    internal static readonly StateMatrix Value = Make();

    private static StateMatrix Make()
    {
        StateMatrix identity = default;
        for (int i = 0; i < StateMatrix.Size; i++)
        {
            identity[(i * StateMatrix.Size) + i] = 1.0;
        }

        return identity;
    }
}
