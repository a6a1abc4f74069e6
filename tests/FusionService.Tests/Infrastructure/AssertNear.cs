// The one tolerance assertion of the service tests: tolerances per quantity, in physical units.
using System.Globalization;

namespace FusionService.Tests.Infrastructure;

/// <summary>Tolerance assertion whose failure message prints expected, actual and difference.</summary>
internal static class AssertNear
{
    /// <summary>Fails unless |actual - expected| &lt;= tolerance (NaN always fails).</summary>
    public static void Equal(double expected, double actual, double tolerance, string quantity)
    {
        double difference = actual - expected;
        if (!(Math.Abs(difference) <= tolerance))
        {
            throw new Xunit.Sdk.XunitException(string.Create(
                CultureInfo.InvariantCulture,
                $"{quantity}: expected {expected:R}, actual {actual:R}, difference {difference:R} exceeds tolerance {tolerance:R}"));
        }
    }

    /// <summary>Fails unless <paramref name="actual"/> exceeds <paramref name="limit"/> by at most <paramref name="tolerance"/> (NaN always fails).</summary>
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
}
