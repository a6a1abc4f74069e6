using System.Globalization;
using Xunit.Sdk;

namespace FusionService.Estimation.Tests;

/// <summary>One tolerance assertion for every physical quantity: the failure says expected, actual and difference.</summary>
internal static class AssertNear
{
    /// <summary>Fails unless |expected - actual| ≤ tolerance (NaN never passes).</summary>
    public static void Equal(double expected, double actual, double tolerance, string quantity)
    {
        double difference = actual - expected;
        if (!(Math.Abs(difference) <= tolerance))
        {
            throw new XunitException(string.Format(
                CultureInfo.InvariantCulture,
                "{0}: expected {1:R}, actual {2:R}, difference {3:R} exceeds tolerance {4:R}",
                quantity, expected, actual, difference, tolerance));
        }
    }
}
