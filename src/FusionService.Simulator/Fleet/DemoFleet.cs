// The invented demo fleet of the town of Brackenholt, with its faults on purpose.
using System.Collections.ObjectModel;
using System.Globalization;
using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Scenarios;

namespace FusionService.Simulator.Fleet;

/// <summary>
/// An invented demo scenario: the parcel depot of the invented town of Brackenholt, placed on open sea (a 10 x 8 street grid of 120 m
/// blocks, <see cref="DeliveryNetwork"/>), 8-20 vans leaving it one after another on delivery rounds with stops of a
/// few minutes, and deliberate faults, listed by <see cref="Faults"/>:
/// <list type="bullet">
/// <item>Canyon blocks (<see cref="CanyonZone"/>): every fix of every van inside is biased (6 m east, -8 m north) and
/// heavy-tailed (Student-t, 3 degrees of freedom, 10 m per axis) while the receiver reports only 4 m.</item>
/// <item>An underpass (<see cref="UnderpassZone"/>): no GNSS at all (neither position nor velocity) while a van is in it.</item>
/// <item><see cref="WheelSizeVanIndex"/>: wheel scale 1.03 (tyres 3 % too large for the configured size); the other
/// vans 1.005-1.010.</item>
/// <item><see cref="GyroBiasVanIndex"/>: gyro yaw-rate bias 3 deg/s; the other vans within ±0.5 deg/s.</item>
/// <item><see cref="JumpingGnssVanIndex"/>: 4 % of its fixes jump 30-100 m in a uniform direction.</item>
/// <item><see cref="TowVanIndex"/>: at its third stop it is lifted onto a tow truck (60 s), towed 2.5 km out of town
/// and set down at a yard, where it stays 10 minutes. GNSS follows the real motion; the wheel reads exactly 0 and the IMU
/// only its bias and noise from the lift on (the truth and measurements are spliced).</item>
/// </list>
/// Every number is an invented demo value. Everything is reproducible from <see cref="DemoFleetOptions.Seed"/>.
/// </summary>
public sealed class DemoFleet
{
    /// <summary>Invented name of the demo town.</summary>
    public const string TownName = "Brackenholt";

    /// <summary>
    /// Latitude of the depot, degrees: the invented town lies at <see cref="InventedPlace"/>, in the open North Pacific
    /// (46.12 N, 170.47 E), about 800 km from the nearest island and farther from any mainland, so that no real street,
    /// village or valley lies beneath it and it can never be taken for a real place (with map tiles on it lies on open water).
    /// </summary>
    public const double DepotLatitudeDeg = InventedPlace.LatitudeDeg;

    /// <summary>Longitude of the depot, degrees (see <see cref="DepotLatitudeDeg"/>).</summary>
    public const double DepotLongitudeDeg = InventedPlace.LongitudeDeg;

    /// <summary>Index of the van with the 3 % wheel-size error ("van-03").</summary>
    public const int WheelSizeVanIndex = 2;

    /// <summary>Index of the van with the 3 deg/s gyro bias ("van-05").</summary>
    public const int GyroBiasVanIndex = 4;

    /// <summary>Index of the van whose GNSS jumps now and then ("van-07").</summary>
    public const int JumpingGnssVanIndex = 6;

    /// <summary>Index of the van that is towed away ("van-08").</summary>
    public const int TowVanIndex = 7;

    /// <summary>Wheel-speed scale of the wheel-size van.</summary>
    public const double FaultyWheelScale = 1.03;

    /// <summary>Gyro bias of the gyro-bias van, degrees per second.</summary>
    public const double FaultyGyroBiasDps = 3.0;

    /// <summary>Probability that a fix of the jumping-GNSS van is a jump.</summary>
    public const double JumpProbability = 0.04;

    /// <summary>Shortest GNSS jump, metres.</summary>
    public const double JumpMinM = 30.0;

    /// <summary>Longest GNSS jump, metres.</summary>
    public const double JumpMaxM = 100.0;

    /// <summary>Straight-line length of the tow, metres.</summary>
    public const double TowDistanceM = 2500.0;

    /// <summary>How long the lift onto the truck takes (van at rest on the truck), seconds.</summary>
    public const int LiftDurationS = 60;

    /// <summary>How long the towed van stays at the yard after being set down, seconds.</summary>
    public const int YardParkS = 600;

    private const double CanyonBiasEastM = 6.0;
    private const double CanyonBiasNorthM = -8.0;
    private const double CanyonSigmaM = 10.0;
    private const double CanyonDegreesOfFreedom = 3.0;
    private const double CanyonReportedSigmaM = 4.0;
    private const double TowBearingFromEastRad = 20.0 * Math.PI / 180.0;

    /// <summary>Builds the fleet: plans and drives every round, generates the measurements and the upload schedules.</summary>
    /// <param name="options">Settings; null for the defaults (12 vans).</param>
    public DemoFleet(DemoFleetOptions? options = null)
    {
        Options = options ?? new DemoFleetOptions();
        Options.Validate();
        Network = new DeliveryNetwork(laneCount: 10, streetCount: 8, blockM: 120.0, originLatitudeDeg: DepotLatitudeDeg, originLongitudeDeg: DepotLongitudeDeg);
        CanyonZone = new FaultZone("Tanners' Quarter", 360.0, 720.0, 240.0, 480.0);
        UnderpassZone = new FaultZone(
            string.Create(CultureInfo.InvariantCulture, $"railway underpass on {Network.LaneName(1)}"), 105.0, 135.0, 92.0, 148.0);
        var vans = new DemoVan[Options.VanCount];
        for (int i = 0; i < vans.Length; i++)
        {
            vans[i] = BuildVan(i);
        }

        Vans = Array.AsReadOnly(vans);
        Faults = Array.AsReadOnly(DescribeFaults());
    }

    /// <summary>The settings the fleet was built with.</summary>
    public DemoFleetOptions Options { get; }

    /// <summary>The street grid of the town; its origin is the depot.</summary>
    public DeliveryNetwork Network { get; }

    /// <summary>The canyon blocks: GNSS biased and heavy-tailed inside.</summary>
    public FaultZone CanyonZone { get; }

    /// <summary>The underpass: no GNSS inside.</summary>
    public FaultZone UnderpassZone { get; }

    /// <summary>The vans, "van-01" first.</summary>
    public ReadOnlyCollection<DemoVan> Vans { get; }

    /// <summary>Every deliberate fault, town-wide ones first, with the values used.</summary>
    public ReadOnlyCollection<DemoFault> Faults { get; }

    /// <summary>Vehicle id of van <paramref name="index"/>: "van-01" for index 0.</summary>
    /// <param name="index">0-based van number.</param>
    public static string VanId(int index) => string.Create(CultureInfo.InvariantCulture, $"van-{index + 1:00}");

    /// <summary>Time spans in which <paramref name="truth"/> lies inside <paramref name="zone"/> (by its samples).</summary>
    /// <param name="truth">A trajectory in the depot's frame.</param>
    /// <param name="zone">The place.</param>
    public static IReadOnlyList<TimeInterval> SpansInside(TruthTrajectory truth, FaultZone zone)
    {
        ArgumentNullException.ThrowIfNull(truth);
        ArgumentNullException.ThrowIfNull(zone);
        var spans = new List<TimeInterval>();
        long? entered = null;
        foreach (TruthSample s in truth.Samples)
        {
            bool inside = zone.Contains(s.EastM, s.NorthM);
            if (inside && entered is null)
            {
                entered = s.TimeUs;
            }
            else if (!inside && entered is long start)
            {
                spans.Add(new TimeInterval(start, s.TimeUs));
                entered = null;
            }
        }

        if (entered is long open)
        {
            spans.Add(new TimeInterval(open, truth.EndTimeUs + 1));
        }

        return spans;
    }

    private DemoVan BuildVan(int index)
    {
        string id = VanId(index);
        int seed = Options.Seed;
        DeliveryRound round = Network.PlanRound(index, Options.StopsPerVan, seed, Options.MinDwellS, Options.MaxDwellS);
        var driverOptions = new RouteDriverOptions
        {
            OriginLatitudeDeg = Network.OriginLatitudeDeg,
            OriginLongitudeDeg = Network.OriginLongitudeDeg,
            StartTimeUs = Options.StartTimeUs + (index * (long)Options.DepartureSpacingS * 1_000_000),
        };
        TruthTrajectory driven = round.Drive(driverOptions);
        var rng = new Random(unchecked((seed * 7919) + (index * 104_729) + 17));
        double wheelScale = 1.0 + (0.005 + (0.005 * rng.NextDouble()));
        double gyroBiasRps = (rng.NextDouble() - 0.5) * (Math.PI / 180.0);
        DemoFaultKind fault = index switch
        {
            WheelSizeVanIndex => DemoFaultKind.WheelSizeError,
            GyroBiasVanIndex => DemoFaultKind.GyroBias,
            JumpingGnssVanIndex => DemoFaultKind.GnssJumps,
            TowVanIndex => DemoFaultKind.TowedAway,
            _ => DemoFaultKind.None,
        };
        TimeInterval? towSpan = null;
        TruthTrajectory truth = driven;
        long liftUs = 0;
        if (fault == DemoFaultKind.TowedAway)
        {
            (truth, liftUs, towSpan) = BuildTow(driven, driverOptions);
        }

        var suite = new SensorSuite
        {
            WheelScale = fault == DemoFaultKind.WheelSizeError ? FaultyWheelScale : wheelScale,
            GyroBiasRps = fault == DemoFaultKind.GyroBias ? FaultyGyroBiasDps * Math.PI / 180.0 : gyroBiasRps,
            OutlierProbability = fault == DemoFaultKind.GnssJumps ? JumpProbability : 0.0,
            OutlierMinM = JumpMinM,
            OutlierMaxM = JumpMaxM,
            UrbanCanyons = [.. SpansInside(truth, CanyonZone).Select(span => new UrbanCanyon(
                span, CanyonBiasEastM, CanyonBiasNorthM, CanyonSigmaM, CanyonDegreesOfFreedom, CanyonReportedSigmaM))],
            GnssOutages = SpansInside(truth, UnderpassZone),

            // A consumer receiver: most of its error drifts slowly (the filter's default model of it).
            GnssCorrelatedVarianceFraction = NoiseProfile.DeliveryVan.GnssCorrelatedFraction,
            GnssCorrelationTauS = NoiseProfile.DeliveryVan.GnssErrorTimeConstantS,
        };
        int measurementSeed = unchecked((seed * 31) + (index * 7_777) + 3);
        Measurement[] measurements = fault == DemoFaultKind.TowedAway
            ? TowMeasurements(driven, truth, suite, liftUs, measurementSeed)
            : [.. MeasurementGenerator.Generate(truth, suite, measurementSeed).Measurements];
        ArrivalSchedule schedule = Uploader.Upload(measurements, Options.Upload, unchecked((seed * 13) + (index * 1_000_003) + 5));
        return new DemoVan(id, index, fault, round, truth, suite, measurements, schedule, towSpan);
    }

    // Real motion of the tow van: the round up to the lift (at its third stop), at rest on the truck, the tow, the yard.
    private static (TruthTrajectory Truth, long LiftUs, TimeInterval TowSpan) BuildTow(TruthTrajectory driven, RouteDriverOptions driverOptions)
    {
        TimeInterval stop = driven.StopIntervals[2];
        long startUs = driven.StartTimeUs;
        long liftUs = startUs + (((stop.StartTimeUs - startUs + 30_000_000 + 999_999) / 1_000_000) * 1_000_000);
        int liftIndex = (int)((liftUs - startUs) / driven.SamplePeriodUs);
        TruthSample at = driven.Samples[liftIndex];
        var samples = new List<TruthSample>(driven.Samples.Take(liftIndex + 1));
        var stops = driven.StopIntervals.Where(s => s.EndTimeUs <= liftUs).ToList();

        TruthTrajectory lift = RouteDriver.Park(at.EastM, at.NorthM, at.HeadingRad, LiftDurationS, driverOptions with { StartTimeUs = liftUs });
        samples.AddRange(lift.Samples.Skip(1));
        double toE = at.EastM + (TowDistanceM * Math.Cos(TowBearingFromEastRad));
        double toN = at.NorthM + (TowDistanceM * Math.Sin(TowBearingFromEastRad));
        TruthTrajectory tow = RouteDriver.Drive(
            [new RouteWaypoint(at.EastM, at.NorthM), new RouteWaypoint(toE, toN)],
            driverOptions with { StartTimeUs = lift.EndTimeUs },
            unchecked(driven.Samples.Count + 11));
        samples.AddRange(tow.Samples.Skip(1));
        TruthSample last = tow.Samples[^1];
        TruthTrajectory yard = RouteDriver.Park(last.EastM, last.NorthM, last.HeadingRad, YardParkS, driverOptions with { StartTimeUs = tow.EndTimeUs });
        samples.AddRange(yard.Samples.Skip(1));
        stops.Add(new TimeInterval(liftUs, lift.EndTimeUs));
        stops.Add(new TimeInterval(tow.EndTimeUs, yard.EndTimeUs + 1));
        var truth = new TruthTrajectory(driven.OriginLatitudeDeg, driven.OriginLongitudeDeg, samples, null, stops);
        return (truth, liftUs, new TimeInterval(liftUs, tow.EndTimeUs));
    }

    // Splices three generated streams: everything up to the lift from the driven round, GNSS after it from the real
    // (towed) motion, wheel and IMU after it from a van body at rest (wheel 0, gyro bias and noise only). Keys are then
    // renumbered per kind so that they are unique again.
    private static Measurement[] TowMeasurements(TruthTrajectory driven, TruthTrajectory truth, SensorSuite suite, long liftUs, int seed)
    {
        int liftIndex = (int)((liftUs - driven.StartTimeUs) / driven.SamplePeriodUs);
        var before = new TruthTrajectory(driven.OriginLatitudeDeg, driven.OriginLongitudeDeg, driven.Samples.Take(liftIndex + 1).ToArray());
        TruthSample at = driven.Samples[liftIndex];
        var bodyOptions = new RouteDriverOptions
        {
            OriginLatitudeDeg = driven.OriginLatitudeDeg,
            OriginLongitudeDeg = driven.OriginLongitudeDeg,
            StartTimeUs = liftUs,
            SamplePeriodUs = driven.SamplePeriodUs,
        };
        TruthTrajectory body = RouteDriver.Park(at.EastM, at.NorthM, at.HeadingRad, (truth.EndTimeUs - liftUs) / 1e6, bodyOptions);
        var all = new List<Measurement>();
        all.AddRange(MeasurementGenerator.Generate(before, suite, seed).Measurements);
        all.AddRange(MeasurementGenerator.Generate(truth, suite with { WheelSpeedEnabled = false, ImuEnabled = false }, seed).Measurements
            .Where(m => m.TimeUs > liftUs));
        all.AddRange(MeasurementGenerator.Generate(body, suite with { GnssPositionEnabled = false, GnssVelocityEnabled = false }, unchecked(seed + 1)).Measurements
            .Where(m => m.TimeUs > liftUs));
        all.Sort(MeasurementGenerator.CompareCanonical);
        var counts = new ulong[4];
        var result = new Measurement[all.Count];
        for (int i = 0; i < result.Length; i++)
        {
            Measurement m = all[i];
            ulong kind = (ulong)m.Kind;
            ulong key = (kind << 48) | counts[kind]++;
            result[i] = m.WithMessageKey(key);
        }

        return result;
    }

    private DemoFault[] DescribeFaults()
    {
        FaultZone c = CanyonZone, u = UnderpassZone;
        string canyon = Invariant($"{c.Name} (east {c.MinEastM}-{c.MaxEastM} m, north {c.MinNorthM}-{c.MaxNorthM} m of the depot): ")
            + Invariant($"GNSS fixes biased {CanyonBiasEastM} m east and {CanyonBiasNorthM} m north, Student-t errors with {CanyonDegreesOfFreedom} ")
            + Invariant($"degrees of freedom and {CanyonSigmaM} m per axis, while the receiver reports {CanyonReportedSigmaM} m.");
        string underpass = Invariant($"{u.Name} (east {u.MinEastM}-{u.MaxEastM} m, north {u.MinNorthM}-{u.MaxNorthM} m of the depot): ")
            + "no GNSS position or velocity while a van is inside.";
        string wheel = Invariant($"wheel speed reads {FaultyWheelScale} x the true speed (3 % wheel-size error); the other vans read 1.005-1.010 x.");
        string gyro = Invariant($"gyro yaw-rate bias {FaultyGyroBiasDps} deg/s; the other vans within +-0.5 deg/s.");
        string jumps = Invariant($"{JumpProbability * 100} % of GNSS fixes jump {JumpMinM}-{JumpMaxM} m in a random direction.");
        string tow = Invariant($"lifted onto a tow truck at its third stop ({LiftDurationS} s), towed {TowDistanceM / 1000} km out of town ")
            + Invariant($"and parked at a yard for {YardParkS / 60} minutes: GNSS follows the real motion, the wheel reads 0 and the IMU shows only bias and noise.");
        return
        [
            new(DemoFaultKind.UrbanCanyon, null, canyon),
            new(DemoFaultKind.Underpass, null, underpass),
            new(DemoFaultKind.WheelSizeError, VanId(WheelSizeVanIndex), wheel),
            new(DemoFaultKind.GyroBias, VanId(GyroBiasVanIndex), gyro),
            new(DemoFaultKind.GnssJumps, VanId(JumpingGnssVanIndex), jumps),
            new(DemoFaultKind.TowedAway, VanId(TowVanIndex), tow),
        ];
    }

    private static string Invariant(FormattableString text) => FormattableString.Invariant(text);
}
