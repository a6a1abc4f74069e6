// Seeded random streams for scenario generation (never the shared generator).
namespace FusionService.Scenarios;

/// <summary>
/// One reproducible random stream: a <see cref="Random"/> seeded from (scenario seed, stream number) through
/// SplitMix64, so each noise source of a scenario has its own stream and switching one feature on or off does not
/// shift the draws of the others.
/// </summary>
/// <remarks>
/// Gaussian draws use the Marsaglia polar method (Marsaglia and Bray 1964); gamma draws use Marsaglia and Tsang
/// (2000, ACM TOMS 26(3)), with the shape &lt; 1 boost Gamma(k) = Gamma(k + 1) U^(1/k).
/// SplitMix64 constants from Steele, Lea and Flood (2014, OOPSLA).
/// </remarks>
internal sealed class ScenarioRandom
{
    private readonly Random _random;
    private double _spareGaussian;
    private bool _hasSpare;

    public ScenarioRandom(int seed, ulong stream)
    {
        _random = new Random(DeriveSeed(seed, stream));
    }

    public static int DeriveSeed(int seed, ulong stream)
    {
        ulong z = ((ulong)(uint)seed << 32) ^ (stream * 0x9E3779B97F4A7C15UL);
        z += 0x9E3779B97F4A7C15UL;
        z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9UL;
        z = (z ^ (z >> 27)) * 0x94D049BB133111EBUL;
        z ^= z >> 31;
        return (int)(z & 0x7FFFFFFF);
    }

    /// <summary>Uniform in [0, 1).</summary>
    public double NextUniform() => _random.NextDouble();

    /// <summary>Uniform in [min, max).</summary>
    public double NextUniform(double min, double max) => min + ((max - min) * _random.NextDouble());

    /// <summary>Uniform integer in [minInclusive, maxExclusive).</summary>
    public long NextInt64(long minInclusive, long maxExclusive) => _random.NextInt64(minInclusive, maxExclusive);

    /// <summary>Uniform integer in [0, maxExclusive).</summary>
    public int NextInt(int maxExclusive) => _random.Next(maxExclusive);

    /// <summary>True with probability <paramref name="p"/>; always consumes one draw.</summary>
    public bool NextBernoulli(double p) => _random.NextDouble() < p;

    /// <summary>Standard normal draw.</summary>
    public double NextGaussian()
    {
        if (_hasSpare)
        {
            _hasSpare = false;
            return _spareGaussian;
        }

        double u, v, s;
        do
        {
            u = (2.0 * _random.NextDouble()) - 1.0;
            v = (2.0 * _random.NextDouble()) - 1.0;
            s = (u * u) + (v * v);
        }
        while (s >= 1.0 || s == 0.0);

        double factor = Math.Sqrt(-2.0 * Math.Log(s) / s);
        _spareGaussian = v * factor;
        _hasSpare = true;
        return u * factor;
    }

    /// <summary>Gamma(shape, scale 1) draw; shape finite and positive.</summary>
    public double NextGamma(double shape)
    {
        if (shape < 1.0)
        {
            double boost = Math.Pow(NextUniformOpen(), 1.0 / shape);
            return NextGamma(shape + 1.0) * boost;
        }

        double d = shape - (1.0 / 3.0);
        double c = 1.0 / Math.Sqrt(9.0 * d);
        while (true)
        {
            double x, v;
            do
            {
                x = NextGaussian();
                v = 1.0 + (c * x);
            }
            while (v <= 0.0);

            v = v * v * v;
            double u = NextUniformOpen();
            double x2 = x * x;
            if (u < 1.0 - (0.0331 * x2 * x2) || Math.Log(u) < (0.5 * x2) + (d * (1.0 - v + Math.Log(v))))
            {
                return d * v;
            }
        }
    }

    /// <summary>Chi-square draw with <paramref name="degreesOfFreedom"/> degrees of freedom.</summary>
    public double NextChiSquared(double degreesOfFreedom) => 2.0 * NextGamma(degreesOfFreedom / 2.0);

    private double NextUniformOpen()
    {
        double u;
        do
        {
            u = _random.NextDouble();
        }
        while (u == 0.0);

        return u;
    }
}
