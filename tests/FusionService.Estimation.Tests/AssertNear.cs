using System.Globalization;
using FusionService.Estimation.Geodesy;

namespace FusionService.Estimation.Tests;

/// <summary>The one tolerance assertion of the test suite: tolerances are per quantity, in physical units.</summary>
internal static class AssertNear
{
    /// <summary>Fails unless |actual - expected| &lt;= tolerance (NaN always fails).</summary>
    /// <param name="expected">Reference value, in the unit named by <paramref name="quantity"/>.</param>
    /// <param name="actual">Computed value, same unit.</param>
    /// <param name="tolerance">Largest allowed absolute difference, same unit.</param>
    /// <param name="quantity">What is compared, with its unit, e.g. "ECEF X (m)".</param>
    public static void Equal(double expected, double actual, double tolerance, string quantity) =>
        Check(expected, actual, actual - expected, tolerance, quantity);

    /// <summary>Like <see cref="Equal"/> for angles in radians: the difference is wrapped to (-pi, pi] first.</summary>
    /// <param name="expectedRad">Reference angle, radians.</param>
    /// <param name="actualRad">Computed angle, radians.</param>
    /// <param name="toleranceRad">Largest allowed wrapped difference, radians.</param>
    /// <param name="quantity">What is compared, e.g. "initial azimuth (rad)".</param>
    public static void EqualAngle(double expectedRad, double actualRad, double toleranceRad, string quantity) =>
        Check(expectedRad, actualRad, Angles.WrapPi(actualRad - expectedRad), toleranceRad, quantity);

    /// <summary><paramref name="actual"/> must not exceed <paramref name="limit"/> by more than <paramref name="tolerance"/>.</summary>
    public static void AtMost(double limit, double actual, double tolerance, string quantity)
    {
        double difference = actual - limit;
        if (!(difference <= tolerance))
        {
            throw new Xunit.Sdk.XunitException(string.Create(
                CultureInfo.InvariantCulture,
                $"{quantity}: expected at most {limit:R}, actual {actual:R}, difference {difference:R} exceeds tolerance {tolerance:R}"));
        }
    }

    /// <summary><paramref name="actual"/> must lie in [<paramref name="low"/>, <paramref name="high"/>] widened by <paramref name="tolerance"/>.</summary>
    public static void Within(double low, double high, double actual, double tolerance, string quantity)
    {
        double below = low - actual, above = actual - high;
        if (!(below <= tolerance && above <= tolerance))
        {
            double difference = below > 0 ? -below : above;
            throw new Xunit.Sdk.XunitException(string.Create(
                CultureInfo.InvariantCulture,
                $"{quantity}: expected within [{low:R}, {high:R}], actual {actual:R}, difference {difference:R} exceeds tolerance {tolerance:R}"));
        }
    }

    private static void Check(double expected, double actual, double difference, double tolerance, string quantity)
    {
        if (Math.Abs(difference) <= tolerance)
        {
            return;
        }

        Assert.Fail(string.Format(
            CultureInfo.InvariantCulture,
            "{0}: expected {1:R}, actual {2:R}, difference {3:R}, tolerance {4:R}",
            quantity,
            expected,
            actual,
            difference,
            tolerance));
    }
}
