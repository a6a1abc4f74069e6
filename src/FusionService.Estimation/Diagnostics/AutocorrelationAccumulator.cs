namespace FusionService.Estimation.Diagnostics;

/// <summary>
/// Streaming sample autocorrelation of a scalar series for lags 1..<see cref="MaxLag"/>, in one pass and fixed memory
/// (three arrays of <see cref="MaxLag"/> values, allocated once): each new value is multiplied with the last
/// <see cref="MaxLag"/> values kept in a ring, so a day of 50 Hz samples needs no buffer of its own.
/// </summary>
/// <remarks>
/// <para>
/// With the lag products C(k) = Σ_{t=1..N-k} x(t) x(t+k), the sum S = Σ x(t) and the sum of squares C(0), the sample
/// autocorrelation about a known zero mean is r(k) = C(k) / C(0) (the time-average autocorrelation of normalised
/// innovations, Bar-Shalom, Li and Kirubarajan 2001; Mehra 1970; sections from memory). About the sample mean m = S / N
/// it is r(k) = [C(k) - m (S - L(k) - F(k)) + (N - k) m²] / [C(0) - N m²], where L(k) and F(k) are the sums of the last
/// and the first k values (Box and Jenkins' estimator with the 1/N normalisation, as in Ljung and Box 1978): both need
/// only the first and the last <see cref="MaxLag"/> values besides the sums.
/// </para>
/// <para>
/// The lag counts samples of this series, not time: a sensor sampled irregularly (gaps, gated measurements left out)
/// is tested in its own sample order.
/// </para>
/// </remarks>
public sealed class AutocorrelationAccumulator
{
    private readonly double[] _lagProducts;
    private readonly double[] _ring;
    private readonly double[] _first;
    private double _sum;
    private double _sumSquares;
    private int _next;

    /// <summary>Creates an accumulator for lags 1..<paramref name="maxLag"/>.</summary>
    /// <param name="maxLag">Largest lag h, in samples, at least 1.</param>
    public AutocorrelationAccumulator(int maxLag)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(maxLag, 1);
        MaxLag = maxLag;
        _lagProducts = new double[maxLag];
        _ring = new double[maxLag];
        _first = new double[maxLag];
    }

    /// <summary>Largest lag h, samples.</summary>
    public int MaxLag { get; }

    /// <summary>Number N of values added (non-finite values are skipped and not counted).</summary>
    public long Count { get; private set; }

    /// <summary>Adds the next value of the series; NaN and infinities are skipped.</summary>
    public void Add(double x)
    {
        if (!double.IsFinite(x))
        {
            return;
        }

        int h = MaxLag;
        long available = Math.Min(Count, h);
        for (int k = 1; k <= available; k++)
        {
            // _ring[(_next - k) mod h] holds x(t - k).
            int slot = _next - k;
            if (slot < 0)
            {
                slot += h;
            }

            _lagProducts[k - 1] += x * _ring[slot];
        }

        if (Count < h)
        {
            _first[Count] = x;
        }

        _ring[_next] = x;
        _next = _next + 1 == h ? 0 : _next + 1;
        _sum += x;
        _sumSquares += x * x;
        Count++;
    }

    /// <summary>Adds every value of <paramref name="series"/> in order.</summary>
    public void AddRange(ReadOnlySpan<double> series)
    {
        foreach (double x in series)
        {
            Add(x);
        }
    }

    /// <summary>Forgets every value added.</summary>
    public void Reset()
    {
        Array.Clear(_lagProducts);
        Array.Clear(_ring);
        Array.Clear(_first);
        _sum = 0;
        _sumSquares = 0;
        _next = 0;
        Count = 0;
    }

    /// <summary>
    /// Writes r(1) .. r(<paramref name="autocorrelation"/>.Length) (dimensionless, in [-1, 1] up to rounding) into
    /// <paramref name="autocorrelation"/>; a lag that is not below <see cref="Count"/>, or a series whose sum of squares
    /// (about the mean when <paramref name="subtractMean"/>) is zero, gives NaN.
    /// </summary>
    /// <param name="autocorrelation">Destination, at most <see cref="MaxLag"/> long.</param>
    /// <param name="subtractMean">
    /// False (default) takes the mean as known to be zero, as it is for the normalised innovations of a consistent
    /// filter, so a persistent bias shows as correlation at every lag; true subtracts the sample mean (the textbook
    /// estimator of a series of unknown mean).
    /// </param>
    public void Autocorrelation(Span<double> autocorrelation, bool subtractMean = false)
    {
        ArgumentOutOfRangeException.ThrowIfGreaterThan(autocorrelation.Length, MaxLag, nameof(autocorrelation));
        long n = Count;
        double mean = subtractMean && n > 0 ? _sum / n : 0.0;
        double denominator = _sumSquares - (n * mean * mean);
        double first = 0, last = 0;
        for (int k = 1; k <= autocorrelation.Length; k++)
        {
            if (k >= n || !(denominator > 0))
            {
                autocorrelation[k - 1] = double.NaN;
                continue;
            }

            // F(k) and L(k): the first k values and the last k values.
            first += _first[k - 1];
            int slot = _next - k;
            if (slot < 0)
            {
                slot += MaxLag;
            }

            last += _ring[slot];
            double numerator = _lagProducts[k - 1] - (mean * ((2 * _sum) - first - last)) + ((n - k) * mean * mean);
            autocorrelation[k - 1] = numerator / denominator;
        }
    }
}
