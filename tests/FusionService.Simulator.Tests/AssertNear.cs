using System.Globalization;

namespace FusionService.Simulator.Tests;

/// <summary>The one tolerance assertion of the simulator tests: tolerances are per quantity, in physical units.</summary>
internal static class AssertNear
{
    /// <summary>Fails unless |actual - expected| &lt;= tolerance (NaN always fails).</summary>
    /// <param name="expected">Reference value, in the unit named by <paramref name="quantity"/>.</param>
    /// <param name="actual">Computed value, same unit.</param>
    /// <param name="tolerance">Largest allowed absolute difference, same unit.</param>
    /// <param name="quantity">What is compared, with its unit, e.g. "tow distance (m)".</param>
    public static void Equal(double expected, double actual, double tolerance, string quantity)
    {
        double difference = actual - expected;
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

    /// <summary><paramref name="actual"/> must lie in [<paramref name="low"/>, <paramref name="high"/>] widened by <paramref name="tolerance"/>.</summary>
    public static void Within(double low, double high, double actual, double tolerance, string quantity)
    {
        double below = low - actual, above = actual - high;
        if (!(below <= tolerance && above <= tolerance))
        {
            double difference = below > 0 ? -below : above;
            Assert.Fail(string.Create(
                CultureInfo.InvariantCulture,
                $"{quantity}: expected within [{low:R}, {high:R}], actual {actual:R}, difference {difference:R} exceeds tolerance {tolerance:R}"));
        }
    }
}
