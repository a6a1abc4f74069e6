// SQL for reading stored measurements with their latest verdicts in tests.
namespace FusionService.Tests.Infrastructure;

/// <summary>
/// FROM items over <c>judged_measurements</c> (migration 0005): the verdicts live in a log of their own, so a test that
/// asks for a measurement's outcome asks the store's function rather than the measurement row.
/// </summary>
internal static class JudgedSql
{
    /// <summary>Every measurement of fleet <c>$1</c>, all vehicles and times, with its latest verdict.</summary>
    public const string OfFleet =
        "(SELECT j.* FROM (SELECT DISTINCT vehicle_id FROM measurements WHERE fleet_id = $1) AS v, "
        + "judged_measurements($1, v.vehicle_id, 0, 9223372036854775807, '-infinity', 'infinity') AS j) AS judged";

    /// <summary>Every measurement of fleet <c>$1</c> and vehicle <c>$2</c>, all times, with its latest verdict.</summary>
    public const string OfVehicle = "judged_measurements($1, $2, 0, 9223372036854775807, '-infinity', 'infinity')";
}
