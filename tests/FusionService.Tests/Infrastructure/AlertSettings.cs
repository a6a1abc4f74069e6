// Alert rule settings used by several alert tests.
using FusionService.Alerts;

namespace FusionService.Tests.Infrastructure;

/// <summary>Settings the alert tests share.</summary>
internal static class AlertSettings
{
    /// <summary>Every rule that can be switched off, switched off.</summary>
    public static AlertRuleSettings AllOff { get; } = AlertRuleSettings.Default with
    {
        GatedBurst = new GatedBurstRule { Enabled = false },
        InconsistentSensor = new InconsistentSensorRule { Enabled = false },
        GnssSilentWhileMoving = new GnssSilentRule { Enabled = false },
        TrackReset = new TrackResetRule { Enabled = false },
        WheelScaleOutOfBand = new WheelScaleRule { Enabled = false },
        MovedWithoutDriving = new MovedWithoutDrivingRule { Enabled = false },
        SensorIsolated = new SensorIsolatedRule { Enabled = false },
        VehicleSilent = new VehicleSilentRule { Enabled = false },
    };
}
