// How the load generator groups synthetic messages into batches.
namespace FusionService.Simulator.Load;

/// <summary>How <see cref="LoadGenerator"/> fills a batch.</summary>
public enum LoadShape
{
    /// <summary>
    /// Each batch holds consecutive messages of one vehicle (as a van's own tracker uploads its buffer); vehicles take
    /// turns batch by batch, so one vehicle's batches arrive in time order.
    /// </summary>
    PerVehicle,

    /// <summary>
    /// Message g of the run goes to vehicle g mod N: each batch holds one or two messages of hundreds of vehicles (as a
    /// gateway relaying many vans would send), and concurrent batches reach a vehicle out of time order.
    /// </summary>
    Interleaved,
}
