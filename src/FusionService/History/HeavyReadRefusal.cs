// Why a history read was not admitted.
namespace FusionService.History;

/// <summary>The outcome of asking <see cref="HeavyReadGate"/> for a slot.</summary>
public enum HeavyReadRefusal
{
    /// <summary>Admitted.</summary>
    None,

    /// <summary>The caller's fleet has its maximum of history reads running (answered 429).</summary>
    FleetBusy,

    /// <summary>Every slot of the process stayed taken for the queue timeout (answered 503).</summary>
    ServiceBusy,
}
