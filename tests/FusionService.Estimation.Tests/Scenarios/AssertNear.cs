// The one tolerance helper of the scenario tests: failures print expected, actual and difference.
using System.Globalization;
using Xunit.Sdk;

namespace FusionService.Estimation.Tests.Scenarios;

internal static class AssertNear
{
    /// <summary>|actual - expected| must not exceed <paramref name="tolerance"/> (in the quantity's unit).</summary>
    public static void Equal(double expected, double actual, double tolerance, string quantity)
    {
        double difference = actual - expected;
        if (!(Math.Abs(difference) <= tolerance))
        {
            throw new XunitException(string.Create(
                CultureInfo.InvariantCulture,
                $"{quantity}: expected {expected:R}, actual {actual:R}, difference {difference:R} exceeds tolerance {tolerance:R}"));
        }
    }

    /// <summary><paramref name="actual"/> must not exceed <paramref name="limit"/> by more than <paramref name="tolerance"/>.</summary>
    public static void AtMost(double limit, double actual, double tolerance, string quantity)
    {
        double difference = actual - limit;
        if (!(difference <= tolerance))
        {
            throw new XunitException(string.Create(
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
            throw new XunitException(string.Create(
                CultureInfo.InvariantCulture,
                $"{quantity}: expected within [{low:R}, {high:R}], actual {actual:R}, difference {difference:R} exceeds tolerance {tolerance:R}"));
        }
    }
}
