// Exact comparison of stored floating-point values.
using System.Globalization;
using Xunit.Sdk;

namespace FusionService.Storage.Tests.Infrastructure;

/// <summary>
/// The storage layer must return every double exactly as written (PostgreSQL <c>double precision</c> is IEEE 754
/// binary64 and binary COPY and the binary protocol carry all 64 bits), so the tolerance is zero: values are
/// compared bit for bit, which also tells -0.0 from 0.0.
/// </summary>
public static class AssertBits
{
    /// <summary>Fails unless <paramref name="actual"/> has the same bits as <paramref name="expected"/>; the
    /// message prints expected, actual and their difference.</summary>
    public static void Equal(double expected, double actual, string quantity)
    {
        if (BitConverter.DoubleToInt64Bits(expected) != BitConverter.DoubleToInt64Bits(actual))
        {
            throw new XunitException(string.Create(
                CultureInfo.InvariantCulture,
                $"{quantity}: expected {expected:R}, actual {actual:R}, difference {actual - expected:R} (tolerance 0, bitwise)"));
        }
    }

    /// <summary>As <see cref="Equal(double, double, string)"/> for optional values; null must stay null.</summary>
    public static void Equal(double? expected, double? actual, string quantity)
    {
        if (expected is null || actual is null)
        {
            Assert.True(expected is null && actual is null, quantity + ": expected " + (expected?.ToString("R", CultureInfo.InvariantCulture) ?? "null")
                + ", actual " + (actual?.ToString("R", CultureInfo.InvariantCulture) ?? "null"));
            return;
        }

        Equal(expected.Value, actual.Value, quantity);
    }
}
