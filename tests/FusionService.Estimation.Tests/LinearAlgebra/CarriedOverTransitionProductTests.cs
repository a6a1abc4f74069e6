using FusionService.Estimation.LinearAlgebra;

namespace FusionService.Estimation.Tests.LinearAlgebra;

/// <summary>
/// <see cref="CarriedOverTransitionProduct"/> (issue 16): its test of F's structure, made four elements at a time, must
/// answer as the element-by-element definition does (IEEE 754 comparison: a NaN is not zero, -0 is), and its product
/// A Fᵀ, which leaves out F's zero columns, must equal the dense product to the last bit (a zero term cannot change a
/// sum that starts at +0). Invented test data.
/// </summary>
public sealed class CarriedOverTransitionProductTests
{
    private const int N = StateMatrix.Size;

    [Fact]
    public void Issue16_structure_test_agrees_with_the_element_by_element_definition()
    {
        double[] values = [0.5, -1e-300, -0.0, 0.0, double.NaN, double.PositiveInfinity];
        for (int i = 0; i < N; i++)
        {
            for (int j = 0; j < N; j++)
            {
                foreach (double value in values)
                {
                    StateMatrix f = StateIdentity.Value;
                    f[(i * N) + j] = value;

                    // Rows 0-3 may hold anything, and so may the diagonal; elsewhere only a value equal to zero is allowed.
                    bool expected = i < 4 || i == j || value == 0.0;
                    Assert.True(
                        expected == CarriedOverTransitionProduct.Applies(f),
                        $"F({i}, {j}) = {value}: expected {expected}");
                }
            }
        }
    }

    [Theory]
    [InlineData(1)]
    [InlineData(2)]
    [InlineData(3)]
    public void Issue16_product_equals_the_dense_product_to_the_last_bit(int seed)
    {
        var random = new Random(seed);
        StateMatrix a = default;
        for (int k = 0; k < StateMatrix.Length; k++)
        {
            a[k] = (random.NextDouble() * 2.0) - 1.0;
        }

        // The prediction's pattern: rows 0 and 1 reach columns 2-5, rows 2 and 3 one column each, a decay on 8 and 9.
        StateMatrix f = StateIdentity.Value;
        foreach ((int row, int column) in new[] { (0, 2), (0, 3), (0, 4), (0, 5), (1, 2), (1, 3), (1, 4), (1, 5), (2, 4), (3, 5) })
        {
            f[(row * N) + column] = (random.NextDouble() * 2.0) - 1.0;
        }

        f[(8 * N) + 8] = 0.98;
        f[(9 * N) + 9] = 0.98;
        Assert.True(CarriedOverTransitionProduct.Applies(f));

        StateMatrix carried = default;
        CarriedOverTransitionProduct.Multiply(a, f, carried);
        StateMatrix dense = default;
        MatrixKernels.MultiplyByTransposed(a, f, ref dense);
        for (int k = 0; k < StateMatrix.Length; k++)
        {
            Assert.Equal(BitConverter.DoubleToInt64Bits(dense[k]), BitConverter.DoubleToInt64Bits(carried[k]));
        }
    }
}
