// A random sequence of multipath episodes.
namespace FusionService.Scenarios;

/// <summary>
/// Random multipath episodes for <see cref="SensorSuite.GnssRandomMultipath"/>: from the truth's start, a gap drawn
/// exponentially with mean <see cref="MeanGapS"/>, then an episode of uniform duration in [<see cref="DurationMinS"/>,
/// <see cref="DurationMaxS"/>) with a bias of uniform length in [<see cref="BiasMinM"/>, <see cref="BiasMaxM"/>) in a
/// uniform direction, then the next gap, and so on to the truth's end. Defaults are invented demo values.
/// </summary>
/// <remarks>
/// An alternating renewal process: over a long run the fraction of time in episodes tends to
/// mean duration / (mean duration + mean gap) (<see cref="ExpectedTimeFraction"/>; renewal-reward theorem, e.g. Cox,
/// Renewal Theory, 1962, from memory).
/// </remarks>
public sealed record MultipathProcess
{
    /// <summary>Mean time from the end of one episode (or the start) to the start of the next, seconds. Default 45.</summary>
    public double MeanGapS { get; init; } = 45.0;

    /// <summary>Shortest episode, seconds. Default 5.</summary>
    public double DurationMinS { get; init; } = 5.0;

    /// <summary>Longest episode, seconds. Default 40.</summary>
    public double DurationMaxS { get; init; } = 40.0;

    /// <summary>Smallest bias length, metres. Default 15.</summary>
    public double BiasMinM { get; init; } = 15.0;

    /// <summary>Largest bias length, metres. Default 60.</summary>
    public double BiasMaxM { get; init; } = 60.0;

    /// <summary>Long-run fraction of time inside episodes: mean duration / (mean duration + <see cref="MeanGapS"/>).</summary>
    public double ExpectedTimeFraction
    {
        get
        {
            double meanDurationS = 0.5 * (DurationMinS + DurationMaxS);
            return meanDurationS / (meanDurationS + MeanGapS);
        }
    }

    /// <summary>Throws <see cref="ArgumentException"/> naming the first inconsistent value.</summary>
    public void Validate()
    {
        Positive(MeanGapS, nameof(MeanGapS));
        Positive(DurationMinS, nameof(DurationMinS));
        Ordered(DurationMinS, DurationMaxS, nameof(DurationMaxS));
        if (!double.IsFinite(BiasMinM) || BiasMinM < 0)
        {
            throw new ArgumentException($"BiasMinM must be finite and non-negative, was {BiasMinM}.", nameof(BiasMinM));
        }

        Ordered(BiasMinM, BiasMaxM, nameof(BiasMaxM));
    }

    /// <summary>The episodes over [start, end] drawn from <paramref name="random"/> (gap, duration, length, direction per episode).</summary>
    internal List<MultipathEpisode> Generate(long startTimeUs, long endTimeUs, ScenarioRandom random)
    {
        var episodes = new List<MultipathEpisode>();
        long t = startTimeUs;
        while (true)
        {
            double gapS = -MeanGapS * Math.Log(1.0 - random.NextUniform());
            double durationS = random.NextUniform(DurationMinS, DurationMaxS);
            double biasM = random.NextUniform(BiasMinM, BiasMaxM);
            double directionRad = random.NextUniform(0.0, 2.0 * Math.PI);
            long begin = t + (long)Math.Round(gapS * 1e6);
            if (begin > endTimeUs)
            {
                return episodes;
            }

            var span = TimeInterval.FromDuration(begin, durationS);
            episodes.Add(new MultipathEpisode(span, biasM * Math.Cos(directionRad), biasM * Math.Sin(directionRad)));
            t = span.EndTimeUs;
        }
    }

    private static void Positive(double value, string name)
    {
        if (!double.IsFinite(value) || value <= 0)
        {
            throw new ArgumentException($"{name} must be finite and positive, was {value}.", name);
        }
    }

    private static void Ordered(double min, double max, string name)
    {
        if (!double.IsFinite(max) || max < min)
        {
            throw new ArgumentException($"{name} must be finite and not below its minimum, was {max}.", name);
        }
    }
}
