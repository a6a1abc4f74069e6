// One stored measurement with its newest verdict, as the chunk reader hands it over.
namespace FusionService.Storage.Measurements;

/// <summary>A stored measurement with its newest verdict, including the whitened innovation (migrations 0006, 0013).</summary>
/// <param name="Row">The measurement, its outcome, NIS and reset flag.</param>
/// <param name="W0">First component of the whitened innovation (dimensionless; GNSS position: east), or null.</param>
/// <param name="W1">Second component of the whitened innovation for 2-D measurements, or null.</param>
public readonly record struct JudgedMeasurement(MeasurementRow Row, float? W0, float? W1);
