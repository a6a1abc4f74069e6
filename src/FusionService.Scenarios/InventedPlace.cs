// Where invented scenarios and the demo town lie on the Earth: a point of our own in the open sea.
namespace FusionService.Scenarios;

/// <summary>
/// The one place of every invented drive: the open North Pacific at 46.12 N, 170.47 E, about 800 km from the nearest
/// island and farther from any mainland, so that no real street, village or valley lies beneath an invented route and
/// it can never be taken for a real place (with map tiles on, the routes lie on open water). The demo town of the
/// simulator, <see cref="DeliveryNetwork"/>, <see cref="RouteDriverOptions"/> and <see cref="ModelConsistentTruthOptions"/>
/// default to it.
/// </summary>
public static class InventedPlace
{
    /// <summary>Latitude of the invented place, degrees (46.12 N).</summary>
    public const double LatitudeDeg = 46.12;

    /// <summary>Longitude of the invented place, degrees (170.47 E).</summary>
    public const double LongitudeDeg = 170.47;
}
