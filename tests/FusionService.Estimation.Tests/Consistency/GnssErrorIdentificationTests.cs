using FusionService.Estimation.Models;
using FusionService.Estimation.Reference;
using FusionService.Estimation.Tracking;
using FusionService.Scenarios;
using Xunit.Abstractions;

namespace FusionService.Estimation.Tests.Consistency;

/// <summary>
/// Issue 12, no retuning per receiver: a receiver whose error is correlated over two minutes with 95 % of its variance
/// (the worst corner of the grid in docs/estimation.md), starting from the default profile (f = 0.75, τ = 60 s). With one
/// fixed (f, τ) the truth lay inside the 95 % ellipse 86.6 % (filtered) and 84.4 % (smoothed) of the time over 64 such
/// drives (`./build.sh bench consistency 64 "tau 120 s share 0.95" fixed`); with <see cref="NoiseProfile.GnssErrorIdentification"/>
/// (the default) each track fits its receiver's share and time constant from the fixes it reports at the stops
/// (<see cref="GnssErrorVariogram"/>), and keeps the fit from round to round. One half-hour round moves it part of the
/// way (the profile's values weigh as much as about 40 long-lag pairs); after three earlier rounds of the same receiver
/// (<see cref="TrackReplay.StartAfter"/>, other routes and seeds) the fit must have found the receiver and hold the band.
/// </summary>
public sealed class GnssErrorIdentificationTests(ITestOutputHelper output)
{
    private const int Drives = 12;

    private const int EarlierRounds = 3;

    [Fact]
    public void Issue12_fitted_error_model_holds_the_ellipse_for_a_receiver_correlated_over_two_minutes()
    {
        NoiseProfile fitted = NoiseProfile.DeliveryVan with { GnssErrorIdentification = true };
        (double filtered, double smoothed, double medianTauS, double medianShare) = Containment(fitted, EarlierRounds);
        (double filteredFirst, double smoothedFirst, double firstTauS, double firstShare) = Containment(fitted, 0);
        (double filteredFixed, double smoothedFixed, _, _) = Containment(NoiseProfile.DeliveryVan with { GnssErrorIdentification = false }, 0);
        output.WriteLine($"fitted after {EarlierRounds} earlier rounds: filtered {filtered:P1}, smoothed {smoothed:P1}, median fit f = {medianShare:F2}, tau = {medianTauS:F0} s");
        output.WriteLine($"fitted on the first round: filtered {filteredFirst:P1}, smoothed {smoothedFirst:P1}, median fit f = {firstShare:F2}, tau = {firstTauS:F0} s");
        output.WriteLine($"fixed (0.75, 60 s): filtered {filteredFixed:P1}, smoothed {smoothedFixed:P1}");

        // The first round moves the fit towards the receiver's own values (true f = 0.95, τ = 120 s), part of the way.
        Assert.InRange(firstShare, 0.8, 0.97);
        Assert.InRange(firstTauS, 65.0, 120.0);
        // Three rounds later it has found them.
        Assert.InRange(medianShare, 0.9, 0.97);
        Assert.InRange(medianTauS, 85.0, 160.0);
        // The lower end of the product's 93-97 % target, over these drives.
        Assert.True(filtered >= 0.93, $"filtered containment {filtered:P1}");
        Assert.True(smoothed >= 0.93, $"smoothed containment {smoothed:P1}");
    }

    /// <summary>
    /// A new van whose fleet's other vans already fitted the same receiver model: its track starts from the median of
    /// their fits (<see cref="TrackState.StartingFrom"/>; the service does this for a vehicle it has not seen, see
    /// docs/estimation.md) and must reach the band's lower end on its first round, where starting from the profile's pair
    /// left it short (these twelve drives: 96.1 % filtered, 92.7 % smoothed; 91.5 / 91.2 % over 64 drives,
    /// `./build.sh bench consistency 64 "tau 120 s share 0.95"`). The fleet's four vans each learned from three rounds of
    /// seeds of their own, none shared with the drives judged.
    /// </summary>
    [Fact]
    public void Issue12_a_new_van_started_from_its_fleets_fitted_pair_holds_the_band_on_its_first_round()
    {
        NoiseProfile fitted = NoiseProfile.DeliveryVan with { GnssErrorIdentification = true };
        var processor = new TrackProcessor(new TrackOptions(), fitted);
        var fleetShares = new List<double>();
        var fleetTaus = new List<double>();
        for (int van = 0; van < 4; van++)
        {
            TrackState learned = TrackReplay.StartAfter(processor, Enumerable.Range(0, EarlierRounds).Select(j => Receiver(7301 + (van * 10) + j).Generate().Measurements));
            Assert.True(learned.GnssErrorFit.HasEstimate, "a fleet van that stood at its stops has a fit");
            fleetShares.Add(learned.GnssErrorFit.Share);
            fleetTaus.Add(learned.GnssErrorFit.TimeConstantS);
        }

        double fleetShare = Median(fleetShares), fleetTauS = Median(fleetTaus);
        (double filtered, double smoothed, double tauS, double share) = Containment(fitted, 0, TrackState.StartingFrom(fleetShare, fleetTauS));
        output.WriteLine($"fleet pair f = {fleetShare:F2}, tau = {fleetTauS:F0} s; first round from it: filtered {filtered:P1}, smoothed {smoothed:P1}, median fit f = {share:F2}, tau = {tauS:F0} s");
        Assert.True(filtered >= 0.93, $"filtered containment {filtered:P1}");
        Assert.True(smoothed >= 0.93, $"smoothed containment {smoothed:P1}");
    }

    private static double Median(List<double> values)
    {
        values.Sort();
        return values.Count % 2 == 1 ? values[values.Count / 2] : 0.5 * (values[(values.Count / 2) - 1] + values[values.Count / 2]);
    }

    private static (double Filtered, double Smoothed, double MedianTauS, double MedianShare) Containment(NoiseProfile profile, int earlierRounds, TrackState? startFrom = null)
    {
        var processor = new TrackProcessor(new TrackOptions(), profile);
        long filtered = 0, filteredInside = 0, smoothed = 0, smoothedInside = 0;
        var taus = new List<double>();
        var shares = new List<double>();
        for (int r = 0; r < Drives; r++)
        {
            ScenarioRun run = Receiver(1201 + (r * 100)).Generate();
            TrackState start = startFrom ?? TrackReplay.StartAfter(processor, Enumerable.Range(0, earlierRounds).Select(j => Receiver(1251 + (r * 100) + j).Generate().Measurements));
            ReplayResult replay = TrackReplay.Run(processor, start, run.Measurements);
            taus.Add(replay.Final.GnssErrorFit.HasEstimate ? replay.Final.GnssErrorFit.TimeConstantS : profile.GnssErrorTimeConstantS);
            shares.Add(replay.Final.GnssErrorFit.HasEstimate ? replay.Final.GnssErrorFit.Share : profile.GnssCorrelatedFraction);
            (_, long fn, long fInside) = TruthTally.Filtered(run, replay);
            (_, long sn, long sInside) = TruthTally.Smoothed(run, replay);
            filtered += fn;
            filteredInside += fInside;
            smoothed += sn;
            smoothedInside += sInside;
        }

        Assert.True(filtered > 10_000 && smoothed > 10_000, "too few whole-second states compared");
        taus.Sort();
        shares.Sort();
        return ((double)filteredInside / filtered, (double)smoothedInside / smoothed, taus[taus.Count / 2], shares[shares.Count / 2]);
    }

    /// <summary>A round of the clean-sky drive with the receiver correlated over two minutes (95 % of its variance).</summary>
    private static RealisticDrive Receiver(int seed)
    {
        RealisticDrive drive = RealisticDrives.CleanSky(seed);
        return drive with { Suite = drive.Suite with { GnssCorrelationTauS = 120.0, GnssCorrelatedVarianceFraction = 0.95 } };
    }
}
