using FusionService.Estimation.Tracking;
using Xunit.Abstractions;

namespace FusionService.Estimation.Tests.Tracking;

/// <summary>
/// The multipath step test (<see cref="MultipathStepDetector"/>) on residual sequences with a known distribution, the
/// track held at the origin. Its false-alarm rate follows from the chi-square distribution of the step's NIS: for two
/// degrees of freedom the upper quantile at probability p is exactly -2 ln(1 - p) (../shared/check-values.md section 1,
/// derived), 13.8155 at p = 0.999.
/// </summary>
public sealed class MultipathStepDetectorTests(ITestOutputHelper output)
{
    private const double StepThreshold = 13.815510557964274; // -2 ln(0.001), chi-square 2 dof, upper tail 0.001 (derived)

    private static readonly TrackOptions Options = new();

    [Fact]
    public void Threshold_is_the_chi_square_quantile_of_the_option()
    {
        Assert.Equal(StepThreshold, -2 * Math.Log(1 - Options.MultipathStepProbability), 12);
        Assert.Equal(StepThreshold, new Gating.ChiSquareGate(Options.MultipathStepProbability).Threshold(2), 9);
    }

    [Fact]
    public void On_white_fixes_of_the_stated_variance_episodes_begin_about_as_often_as_the_step_test_errs()
    {
        // 50,000 fixes at 1 Hz, white N(0, 2.25 m²) per axis (a 3 m receiver with a quarter of its variance white), the
        // detector told exactly that and no correlated error. Each fix runs the one-fix test, whose NIS is then chi-square
        // with 2 dof, and when it passes the two-fix test: a step is found at a rate between 0.001 and 0.002 per fix, and
        // an episode begins on a step away from the track, about half of them. Bounds: three binomial standard deviations.
        const int Fixes = 50_000;
        const double WhiteVarianceM2 = 2.25;
        var random = new Random(20261205);
        var detector = default(MultipathStepDetector);
        int onsets = 0, setAside = 0;
        for (int k = 0; k < Fixes; k++)
        {
            bool wasActive = detector.Active;
            double east = Gaussian(random) * Math.Sqrt(WhiteVarianceM2), north = Gaussian(random) * Math.Sqrt(WhiteVarianceM2);
            bool aside = detector.Observe(k * 1_000_000L, east, north, 0, 0, 0, 0, WhiteVarianceM2, 0, 0, 60, StepThreshold, Options);
            onsets += aside && !wasActive ? 1 : 0;
            setAside += aside ? 1 : 0;
        }

        output.WriteLine($"{onsets} episodes begun, {setAside} fixes set aside of {Fixes}; white scale learnt {detector.WhiteScale:F3}");
        double upper = (0.002 * Fixes) + (3 * Math.Sqrt(0.002 * Fixes));
        double lower = (0.00025 * Fixes) - (3 * Math.Sqrt(0.00025 * Fixes));
        Assert.InRange(onsets, lower, upper);
        Assert.True(setAside <= 4 * onsets, $"{setAside} fixes set aside for {onsets} false episodes: they should end within a few fixes");
        Assert.InRange(detector.WhiteScale, 0.8, 1.2);
    }

    [Fact]
    public void A_12_metre_reflection_is_set_aside_and_the_fixes_after_it_are_not()
    {
        // Episodes of 20 fixes biased 12 m in a random direction every 60 fixes, white noise as a 3 m receiver (4.5 m
        // reported inside an episode) with a quarter white, the detector told a 75 % correlated share with tau 60 s.
        const double CleanWhiteM2 = 0.25 * 9.0, EpisodeWhiteM2 = 0.25 * 20.25;
        var random = new Random(4512);
        var detector = default(MultipathStepDetector);
        int episodeFixes = 0, episodeAside = 0, cleanFixes = 0, cleanAside = 0;
        for (int k = 0; k < 60 * 200; k++)
        {
            int phase = k % 60;
            bool inEpisode = phase >= 30 && phase < 50;
            if (phase == 30)
            {
                double direction = random.NextDouble() * 2 * Math.PI;
                _bias = (12 * Math.Cos(direction), 12 * Math.Sin(direction));
            }

            double white = inEpisode ? EpisodeWhiteM2 : CleanWhiteM2;
            double east = (Gaussian(random) * Math.Sqrt(white)) + (inEpisode ? _bias.East : 0);
            double north = (Gaussian(random) * Math.Sqrt(white)) + (inEpisode ? _bias.North : 0);
            bool aside = detector.Observe(k * 1_000_000L, east, north, 0, 0, 0, 0, white, 0, 0.75 * 9.0, 60, StepThreshold, Options);
            if (inEpisode && phase >= 32)
            {
                episodeFixes++;
                episodeAside += aside ? 1 : 0;
            }
            else if (!inEpisode)
            {
                cleanFixes++;
                cleanAside += aside ? 1 : 0;
            }
        }

        output.WriteLine($"episode fixes set aside {episodeAside} of {episodeFixes}; clean fixes set aside {cleanAside} of {cleanFixes}");
        Assert.True(episodeAside >= 0.9 * episodeFixes, $"{episodeAside} of {episodeFixes} episode fixes set aside");
        Assert.True(cleanAside <= 0.01 * cleanFixes, $"{cleanAside} of {cleanFixes} clean fixes set aside");
    }

    [Fact]
    public void Fixes_that_run_away_from_the_episode_level_end_it_and_hold_off_the_next()
    {
        // A step of 15 m (an episode begins at once: half of it in the mean of the newest two fixes is 7.5 m, NIS 25 against
        // 2.25 m² for the two means), held for a second fix, then fixes moving on by 5 m a second (the track drifting, not a
        // reflection): the episode ends within a few fixes and none begins again for MultipathSuppressS, not even on a
        // step of 55 m back.
        var detector = default(MultipathStepDetector);
        for (int k = 0; k < 10; k++)
        {
            detector.Observe(k * 1_000_000L, 0, 0, 0, 0, 0, 0, 2.25, 0, 6.75, 60, StepThreshold, Options);
        }

        Assert.True(detector.Observe(10_000_000L, 15, 0, 0, 0, 0, 0, 2.25, 0, 6.75, 60, StepThreshold, Options));
        Assert.Equal(10_000_000L, detector.ActiveSinceUs);
        Assert.True(detector.Observe(11_000_000L, 15, 0, 0, 0, 0, 0, 2.25, 0, 6.75, 60, StepThreshold, Options));
        Assert.Equal(10_000_000L, detector.ActiveSinceUs);
        int ended = -1;
        for (int k = 12; k < 20 && ended < 0; k++)
        {
            if (!detector.Observe(k * 1_000_000L, 15 + (5 * (k - 11)), 0, 0, 0, 0, 0, 2.25, 0, 6.75, 60, StepThreshold, Options))
            {
                ended = k;
            }
        }

        Assert.InRange(ended, 12, 15);
        Assert.Equal(ended * 1_000_000L + (long)(Options.MultipathSuppressS * 1e6), detector.SuppressedUntilUs);
        Assert.False(detector.Observe((ended + 1) * 1_000_000L, -40, 0, 0, 0, 0, 0, 2.25, 0, 6.75, 60, StepThreshold, Options));
        Assert.False(detector.Observe((ended + 2) * 1_000_000L, -40, 0, 0, 0, 0, 0, 2.25, 0, 6.75, 60, StepThreshold, Options));
    }

    private (double East, double North) _bias;

    private static double Gaussian(Random random) =>
        Math.Sqrt(-2 * Math.Log(1 - random.NextDouble())) * Math.Cos(2 * Math.PI * random.NextDouble());
}
