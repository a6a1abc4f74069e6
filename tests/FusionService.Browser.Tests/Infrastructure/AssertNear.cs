// The one tolerance assertion of the browser tests: tolerances per quantity, in physical units.
using System.Globalization;

namespace FusionService.Browser.Tests.Infrastructure;

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
}
