namespace FusionService.Storage.BaseLayer;

/// <summary>One grid cell the fleet drove through: its row and column on the grid and how much it was used.</summary>
/// <param name="Row">Cell row: floor(latitude / cell height in degrees).</param>
/// <param name="Col">Cell column: floor(longitude / cell width in degrees).</param>
/// <param name="States">Stored moving estimates that fell into the cell.</param>
/// <param name="Vehicles">Different vehicles among them.</param>
public sealed record RoadCellRow(long Row, long Col, long States, long Vehicles);
