// One named scenario of realistic GNSS behaviour: truth, sensors and seed.
namespace FusionService.Scenarios;

/// <summary>A named, seeded scenario of <see cref="RealisticDrives"/>: the truth, the sensors and the noise seed.</summary>
/// <param name="Name">Short name, e.g. "clean-sky".</param>
/// <param name="Truth">True motion.</param>
/// <param name="Suite">Sensors and their errors.</param>
/// <param name="Seed">Seed of the measurement noise.</param>
public sealed record RealisticDrive(string Name, TruthTrajectory Truth, SensorSuite Suite, int Seed)
{
    /// <summary>The measurements of <see cref="Suite"/> over <see cref="Truth"/> with <see cref="Seed"/>.</summary>
    public ScenarioRun Generate() => MeasurementGenerator.Generate(Truth, Suite, Seed);
}
