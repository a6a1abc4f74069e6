namespace FusionService.Estimation.Models;

/// <summary>
/// Process and sensor noise of one vehicle class. Spectral densities are of continuous white noise driving the
/// motion model (<see cref="CtraMotionModel"/>); standard deviations are per sample.
/// </summary>
/// <remarks>
/// The defaults describe a delivery van (common practice for the order of magnitude, values from memory):
/// accelerations of 0.1-0.3 g, braking to 0.6-0.8 g, yaw rates to 30 deg/s, an automotive-grade gyro
/// (bias about 0.1 deg/s, El-Sheimy and Youssef 2020, Table 1) and an uncalibrated wheel odometer (0.5-2 % scale error).
/// </remarks>
public sealed record NoiseProfile
{
    /// <summary>Spectral density of longitudinal jerk, m^2/s^5. Default 1.0 (about 1 m/s^3 over one second).</summary>
    public double JerkDensityM2PerS5 { get; init; } = 1.0;

    /// <summary>Spectral density of yaw acceleration, rad^2/s^3. Default 0.04 (about 11 deg/s^2 over one second).</summary>
    public double YawAccelDensityRad2PerS3 { get; init; } = 0.04;

    /// <summary>Spectral density of unmodelled position motion (slip, lane changes), m^2/s. Default 0.02.</summary>
    public double PositionDensityM2PerS { get; init; } = 0.02;

    /// <summary>Random-walk density of the gyro bias, rad^2/s^3. Default 1e-9 (about 0.1 deg/s drift per hour).</summary>
    public double GyroBiasDensityRad2PerS3 { get; init; } = 1e-9;

    /// <summary>Random-walk density of the wheel-speed scale factor, 1/s. Default 1e-10 (tyre wear and load).</summary>
    public double WheelScaleDensityPerS { get; init; } = 1e-10;

    /// <summary>Wheel-speed sample noise, m/s (1 sigma). Default 0.05.</summary>
    public double WheelSpeedSigmaMps { get; init; } = 0.05;

    /// <summary>Gyro yaw-rate sample noise, rad/s (1 sigma). Default 0.005 (about 0.3 deg/s).</summary>
    public double GyroSigmaRps { get; init; } = 0.005;

    /// <summary>Longitudinal accelerometer sample noise, m/s^2 (1 sigma, includes road grade). Default 0.3.</summary>
    public double AccelSigmaMps2 { get; init; } = 0.3;

    /// <summary>Initial standard deviation of the gyro bias, rad/s. Default 0.035 (2 deg/s, consumer MEMS turn-on bias).</summary>
    public double InitialGyroBiasSigmaRps { get; init; } = 0.035;

    /// <summary>Initial standard deviation of the wheel-speed scale factor. Default 0.05.</summary>
    public double InitialWheelScaleSigma { get; init; } = 0.05;

    /// <summary>Initial standard deviation of speed when nothing observes it, m/s. Default 10.</summary>
    public double InitialSpeedSigmaMps { get; init; } = 10.0;

    /// <summary>Initial standard deviation of yaw rate, rad/s. Default 0.3.</summary>
    public double InitialYawRateSigmaRps { get; init; } = 0.3;

    /// <summary>Initial standard deviation of longitudinal acceleration, m/s^2. Default 1.5.</summary>
    public double InitialAccelSigmaMps2 { get; init; } = 1.5;

    /// <summary>
    /// Share of a GNSS fix's reported error variance that is correlated over time (see <see cref="GnssErrorModel"/>), in
    /// (0, 1); the rest is white. Default 0.75: consumer receivers' errors are dominated by slowly varying atmospheric,
    /// orbit and clock errors and multipath (common practice). Of the settings compared in docs/estimation.md
    /// (`./build.sh bench consistency`), 0.6 left the smoothed ellipse over-confident on rounds with long stops (76-88 %
    /// clean sky) and 0.75 kept both ellipses at or above 93 % on every realistic drive, conservative for live positions.
    /// </summary>
    public double GnssCorrelatedFraction { get; init; } = 0.75;

    /// <summary>
    /// Correlation time τ of the GNSS error's correlated part, seconds. Default 60 (real errors decorrelate over tens of
    /// seconds to minutes; common practice; compared across 20-120 s in docs/estimation.md).
    /// </summary>
    public double GnssErrorTimeConstantS { get; init; } = 60.0;

    /// <summary>
    /// Whether each track fits its receiver's correlated share and time constant from the fixes it reports while the
    /// vehicle stands (<see cref="GnssErrorVariogram"/>), starting from <see cref="GnssCorrelatedFraction"/> and
    /// <see cref="GnssErrorTimeConstantS"/> and held within 0.3-0.97 and 10-300 s; false keeps the profile's values for
    /// the whole track. Default true: one fixed pair does not hold the 95 % ellipse over receivers with time constants of
    /// 20-120 s and shares of 50-95 %, a fit does, once the track has seen a few rounds of stops (docs/estimation.md,
    /// "Each receiver's own share and time constant"). Fixes whose accuracy came from HDOP are not fitted.
    /// </summary>
    public bool GnssErrorIdentification { get; init; } = true;

    /// <summary>The delivery-van defaults.</summary>
    public static NoiseProfile DeliveryVan { get; } = new();

    /// <summary>Throws <see cref="ArgumentException"/> naming the first value that is not finite and positive.</summary>
    public void Validate()
    {
        Check(JerkDensityM2PerS5, nameof(JerkDensityM2PerS5));
        Check(YawAccelDensityRad2PerS3, nameof(YawAccelDensityRad2PerS3));
        Check(PositionDensityM2PerS, nameof(PositionDensityM2PerS));
        Check(GyroBiasDensityRad2PerS3, nameof(GyroBiasDensityRad2PerS3));
        Check(WheelScaleDensityPerS, nameof(WheelScaleDensityPerS));
        Check(WheelSpeedSigmaMps, nameof(WheelSpeedSigmaMps));
        Check(GyroSigmaRps, nameof(GyroSigmaRps));
        Check(AccelSigmaMps2, nameof(AccelSigmaMps2));
        Check(InitialGyroBiasSigmaRps, nameof(InitialGyroBiasSigmaRps));
        Check(InitialWheelScaleSigma, nameof(InitialWheelScaleSigma));
        Check(InitialSpeedSigmaMps, nameof(InitialSpeedSigmaMps));
        Check(InitialYawRateSigmaRps, nameof(InitialYawRateSigmaRps));
        Check(InitialAccelSigmaMps2, nameof(InitialAccelSigmaMps2));
        Check(GnssErrorTimeConstantS, nameof(GnssErrorTimeConstantS));
        if (!(GnssCorrelatedFraction > 0 && GnssCorrelatedFraction < 1))
        {
            throw new ArgumentException($"{nameof(GnssCorrelatedFraction)} must lie in (0, 1), was {GnssCorrelatedFraction}.", nameof(GnssCorrelatedFraction));
        }
    }

    private static void Check(double value, string name)
    {
        if (!double.IsFinite(value) || value <= 0)
        {
            throw new ArgumentException($"{name} must be finite and positive, was {value}.", name);
        }
    }
}
