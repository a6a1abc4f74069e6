using FusionService.Estimation.Diagnostics;

namespace FusionService.Estimation.Tests.Diagnostics;

/// <summary>
/// 95 % ellipse of a 2 x 2 covariance (derived: semi-axes sqrt(λ χ²₂(0.95)) with χ²₂(0.95) = 5.99146, NIST/SEMATECH
/// table 1.3.6.7.4, published; λ the eigenvalues; orientation of the major eigenvector).
/// </summary>
public sealed class ErrorEllipseTests
{
    private const double Chi2Dof2P95 = 5.99146;

    [Theory]
    [InlineData(4.0, 1.0, 0.0)]
    [InlineData(1.0, 9.0, 0.0)]
    [InlineData(2.0, 2.0, 1.5)]
    public void Axes_and_orientation_follow_the_eigen_decomposition(double varE, double varN, double cov)
    {
        ErrorEllipse e = ErrorEllipse.FromCovariance(varE, varN, cov);
        var m = MathNet.Numerics.LinearAlgebra.Matrix<double>.Build.DenseOfArray(new[,] { { varE, cov }, { cov, varN } });
        var evd = m.Evd(MathNet.Numerics.LinearAlgebra.Symmetricity.Symmetric);
        double minor = evd.EigenValues[0].Real, major = evd.EigenValues[1].Real;
        AssertNear.Equal(Math.Sqrt(major * Chi2Dof2P95), e.SemiMajorM, 1e-4, "semi-major axis, m");
        AssertNear.Equal(Math.Sqrt(minor * Chi2Dof2P95), e.SemiMinorM, 1e-4, "semi-minor axis, m");
        double east = evd.EigenVectors[0, 1], north = evd.EigenVectors[1, 1];
        double expectedFromNorth = Math.Atan2(east, north);
        AssertNear.Equal(0, Math.IEEERemainder(e.OrientationRad - expectedFromNorth, Math.PI), 1e-12, "orientation (mod pi), rad");
        Assert.InRange(e.OrientationRad, -Math.PI / 2 + 1e-15, Math.PI / 2);
        Assert.True(e.SemiMajorM >= e.SemiMinorM && e.SemiMinorM >= 0);
    }

    [Fact]
    public void East_elongated_covariance_points_east()
    {
        ErrorEllipse e = ErrorEllipse.FromCovariance(4.0, 1.0, 0.0);
        AssertNear.Equal(Math.PI / 2, e.OrientationRad, 1e-15, "orientation, rad clockwise from north");
        AssertNear.Equal(2.0 * Math.Sqrt(Chi2Dof2P95), e.SemiMajorM, 1e-4, "semi-major axis, m");
    }

    [Fact]
    public void Non_finite_covariance_is_refused()
    {
        Assert.Throws<ArgumentException>(() => ErrorEllipse.FromCovariance(double.NaN, 1, 0));
        Assert.Throws<ArgumentException>(() => ErrorEllipse.FromCovariance(-1, 1, 0));
    }
}
