using System.Buffers.Binary;
using FusionService.Estimation.Geodesy;
using FusionService.Estimation.LinearAlgebra;
using FusionService.Estimation.Measurements;

namespace FusionService.Estimation.Tracking;

/// <summary>
/// Versioned little-endian binary form of a <see cref="TrackState"/> and of the measurement it ends with, for storing
/// checkpoints. Decoding gives back a bitwise-equal state (the covariance is stored as its upper triangle, which is
/// exact because the filter keeps it exactly symmetric).
/// </summary>
public static class TrackStateCodec
{
    /// <summary>Format version written in the first byte.</summary>
    public const byte Version = 8;

    /// <summary>
    /// The earlier format still read: version 7, the same but for the receiver fit's starting pair, read as none (the
    /// profile's, which is what tracks of that version started from), so that an upgrade restores tracks from their
    /// checkpoints instead of replaying every vehicle's kept days.
    /// </summary>
    public const byte PreviousVersion = 7;

    /// <summary>Whether a checkpoint of format <paramref name="version"/> can be decoded.</summary>
    public static bool CanDecode(short version) => version is Version or PreviousVersion;

    /// <summary>Size of an encoded checkpoint, bytes.</summary>
    public const int EncodedLength = 1 + (StateVector.Length * 8) + (StateMatrix.Size * (StateMatrix.Size + 1) / 2 * 8) + 8 + 1 + (3 * 8) + 3 + 8 + 1 + (1 + 8 + (3 * 8) + 1) + (1 + 8 + (4 * 8)) + 8 + 4 + 4 + (8 + 8 + 8 + 8 + 4) + 12 + 8 + (1 + 8 + 4 + 8 + 4 + 8) + 4 + 16 + 8 + 8 + AgreementLength + FitLength + StepsLength;

    // Version 7 lacks the fit's starting pair, two doubles.
    private const int PreviousEncodedLength = EncodedLength - (2 * 8);

    // GnssErrorVariogram: 2 flags, 2 times, 16 doubles.
    private const int FitLength = 2 + (2 * 8) + (16 * 8);

    // MultipathStepDetector: the ring, a count, 2 pulls, a flag, a time, 4 levels, a counter, the white scale, a variance, a time, 4 error estimates.
    private const int StepsLength = (FixResidualRing.Length * 8) + 4 + (2 * 8) + 1 + 8 + (4 * 8) + 4 + 8 + 8 + 8 + (4 * 8);

    // StreamAgreement: 2 flags, 6 times, 5 counters, 13 doubles and the ring of chord offsets.
    private const int AgreementLength = 2 + (6 * 8) + (5 * 4) + (13 * 8) + (ChordOffsetRing.Length * 8);

    /// <summary>Encodes a state and the last measurement it includes.</summary>
    public static byte[] Encode(in TrackState state, in Measurement last)
    {
        var buffer = new byte[EncodedLength];
        EncodeInto(state, last, buffer);
        return buffer;
    }

    /// <summary>Encodes into <paramref name="destination"/> (at least <see cref="EncodedLength"/> bytes) without allocating.</summary>
    public static void EncodeInto(in TrackState state, in Measurement last, Span<byte> destination)
    {
        if (destination.Length < EncodedLength)
        {
            throw new ArgumentException($"need {EncodedLength} bytes, got {destination.Length}", nameof(destination));
        }

        var w = new Writer(destination);
        w.Byte(Version);
        for (int i = 0; i < StateVector.Length; i++)
        {
            w.Double(state.X[i]);
        }

        for (int i = 0; i < StateMatrix.Size; i++)
        {
            for (int j = i; j < StateMatrix.Size; j++)
            {
                w.Double(state.P[(i * StateMatrix.Size) + j]);
            }
        }

        w.Long(state.TimeUs);
        w.Byte((byte)state.Phase);
        GeodeticPoint anchor = state.HasPlane ? state.Plane.Anchor : default;
        w.Double(anchor.LatitudeRad);
        w.Double(anchor.LongitudeRad);
        w.Double(anchor.HeightM);
        w.Bool(state.HasPlane);
        w.Bool(state.Stationary);
        w.Bool(state.HasCalibration);
        w.Long(state.WheelZeroSinceUs);
        w.Byte(0);
        w.Bool(state.Fix.IsSet);
        w.Long(state.Fix.TimeUs);
        w.Double(state.Fix.EastM);
        w.Double(state.Fix.NorthM);
        w.Double(state.Fix.SigmaM);
        w.Bool(state.Fix.Confirmed);
        w.Bool(state.Course.IsSet);
        w.Long(state.Course.TimeUs);
        w.Double(state.Course.HeadingRad);
        w.Double(state.Course.HeadingSigmaRad);
        w.Double(state.Course.SpeedMps);
        w.Double(state.Course.SpeedSigmaMps);
        w.Long(state.RejectedSinceUs);
        w.Int(state.RejectedFixes);
        w.Int(state.Resets);
        w.Int(state.VelocityRejections);
        w.Int(state.WheelRejections);
        w.Int(state.ImuRejections);
        w.Long(state.ImuFusedUs);
        w.Int(state.StaleErrorEvidence);
        w.Long(state.LastWheelUs);
        w.Double(state.LastWheelSpeedMps);
        w.Long(state.GnssStillSinceUs);
        w.Double(state.GnssCorrelatedVarianceM2);
        w.Bool(state.Carried);
        w.Long(state.CarriedSinceUs);
        w.Int(state.CarryEvidence);
        w.Long(state.CarryEvidenceSinceUs);
        w.Int(state.CarrySlow);
        w.Long(state.CarrySlowSinceUs);
        WriteAgreement(ref w, state.Agreement);
        WriteFit(ref w, state.GnssErrorFit);
        WriteSteps(ref w, state.MultipathSteps);
        w.Long(last.TimeUs);
        w.Long((long)last.OrderKey);
        w.Double(last.Value0);
        w.Double(last.Value1);
        w.Float(last.Value2);
    }

    /// <summary>Decodes what <see cref="Encode"/> wrote, or a checkpoint of <see cref="PreviousVersion"/>.</summary>
    /// <exception cref="FormatException">Wrong length or unknown version.</exception>
    public static (TrackState State, Measurement Last) Decode(ReadOnlySpan<byte> data)
    {
        bool current = data.Length == EncodedLength && data[0] == Version;
        if (!current && !(data.Length == PreviousEncodedLength && data[0] == PreviousVersion))
        {
            throw new FormatException(
                $"not a version {Version} track checkpoint of {EncodedLength} bytes nor a version {PreviousVersion} one of {PreviousEncodedLength} (got {data.Length} bytes, version {(data.IsEmpty ? -1 : data[0])})");
        }

        var r = new Reader(data[1..]);
        var s = default(TrackState);
        for (int i = 0; i < StateVector.Length; i++)
        {
            s.X[i] = r.Double();
        }

        for (int i = 0; i < StateMatrix.Size; i++)
        {
            for (int j = i; j < StateMatrix.Size; j++)
            {
                double v = r.Double();
                s.P[(i * StateMatrix.Size) + j] = v;
                s.P[(j * StateMatrix.Size) + i] = v;
            }
        }

        s.TimeUs = r.Long();
        s.Phase = (TrackPhase)r.Byte();
        var anchor = new GeodeticPoint(r.Double(), r.Double(), r.Double());
        s.HasPlane = r.Bool();
        if (s.HasPlane)
        {
            s.Plane = new LocalTangentPlane(anchor);
        }

        s.Stationary = r.Bool();
        s.HasCalibration = r.Bool();
        s.WheelZeroSinceUs = r.Long();
        r.Byte();
        s.Fix = new HeldFix(r.Bool(), r.Long(), r.Double(), r.Double(), r.Double(), r.Bool());
        s.Course = new HeldCourse(r.Bool(), r.Long(), r.Double(), r.Double(), r.Double(), r.Double());
        s.RejectedSinceUs = r.Long();
        s.RejectedFixes = r.Int();
        s.Resets = r.Int();
        s.VelocityRejections = r.Int();
        s.WheelRejections = r.Int();
        s.ImuRejections = r.Int();
        s.ImuFusedUs = r.Long();
        s.StaleErrorEvidence = r.Int();
        s.LastWheelUs = r.Long();
        s.LastWheelSpeedMps = r.Double();
        s.GnssStillSinceUs = r.Long();
        s.GnssCorrelatedVarianceM2 = r.Double();
        s.Carried = r.Bool();
        s.CarriedSinceUs = r.Long();
        s.CarryEvidence = r.Int();
        s.CarryEvidenceSinceUs = r.Long();
        s.CarrySlow = r.Int();
        s.CarrySlowSinceUs = r.Long();
        s.Agreement = ReadAgreement(ref r);
        s.GnssErrorFit = ReadFit(ref r, withStart: current);
        s.MultipathSteps = ReadSteps(ref r);
        long timeUs = r.Long();
        ulong orderKey = (ulong)r.Long();
        Measurement last = Measurement.FromStored(timeUs, orderKey, r.Double(), r.Double(), r.Float());
        return (s, last);
    }

    private static void WriteSteps(ref Writer w, in MultipathStepDetector d)
    {
        for (int i = 0; i < FixResidualRing.Length; i++)
        {
            w.Double(d.Ring[i]);
        }

        w.Int(d.Count);
        w.Double(d.PullEastM);
        w.Double(d.PullNorthM);
        w.Bool(d.Active);
        w.Long(d.ActiveSinceUs);
        w.Double(d.ReferenceEastM);
        w.Double(d.ReferenceNorthM);
        w.Double(d.BiasEastM);
        w.Double(d.BiasNorthM);
        w.Int(d.LevelFixes);
        w.Double(d.WhiteScale);
        w.Double(d.PositionVarianceAfterM2);
        w.Long(d.SuppressedUntilUs);
        w.Double(d.PreviousErrorEastM);
        w.Double(d.PreviousErrorNorthM);
        w.Double(d.EpisodeErrorEastM);
        w.Double(d.EpisodeErrorNorthM);
    }

    private static MultipathStepDetector ReadSteps(ref Reader r)
    {
        var d = default(MultipathStepDetector);
        for (int i = 0; i < FixResidualRing.Length; i++)
        {
            d.Ring[i] = r.Double();
        }

        d.Count = r.Int();
        d.PullEastM = r.Double();
        d.PullNorthM = r.Double();
        d.Active = r.Bool();
        d.ActiveSinceUs = r.Long();
        d.ReferenceEastM = r.Double();
        d.ReferenceNorthM = r.Double();
        d.BiasEastM = r.Double();
        d.BiasNorthM = r.Double();
        d.LevelFixes = r.Int();
        d.WhiteScale = r.Double();
        d.PositionVarianceAfterM2 = r.Double();
        d.SuppressedUntilUs = r.Long();
        d.PreviousErrorEastM = r.Double();
        d.PreviousErrorNorthM = r.Double();
        d.EpisodeErrorEastM = r.Double();
        d.EpisodeErrorNorthM = r.Double();
        return d;
    }

    private static void WriteFit(ref Writer w, in Models.GnssErrorVariogram f)
    {
        w.Bool(f.HasPrevious);
        w.Long(f.PreviousUs);
        w.Double(f.PreviousEastM);
        w.Double(f.PreviousNorthM);
        w.Double(f.PreviousVarianceM2);
        w.Bool(f.HasAnchor);
        w.Long(f.AnchorUs);
        w.Double(f.AnchorEastM);
        w.Double(f.AnchorNorthM);
        w.Double(f.AnchorVarianceM2);
        w.Double(f.ShortSum);
        w.Double(f.ShortCount);
        w.Double(f.ShortLagSumS);
        w.Double(f.LongSum);
        w.Double(f.LongCount);
        w.Double(f.LongLagSumS);
        w.Double(f.Share);
        w.Double(f.TimeConstantS);
        w.Double(f.StartShare);
        w.Double(f.StartTimeConstantS);
    }

    private static Models.GnssErrorVariogram ReadFit(ref Reader r, bool withStart) => new()
    {
        HasPrevious = r.Bool(),
        PreviousUs = r.Long(),
        PreviousEastM = r.Double(),
        PreviousNorthM = r.Double(),
        PreviousVarianceM2 = r.Double(),
        HasAnchor = r.Bool(),
        AnchorUs = r.Long(),
        AnchorEastM = r.Double(),
        AnchorNorthM = r.Double(),
        AnchorVarianceM2 = r.Double(),
        ShortSum = r.Double(),
        ShortCount = r.Double(),
        ShortLagSumS = r.Double(),
        LongSum = r.Double(),
        LongCount = r.Double(),
        LongLagSumS = r.Double(),
        Share = r.Double(),
        TimeConstantS = r.Double(),
        StartShare = withStart ? r.Double() : 0,
        StartTimeConstantS = withStart ? r.Double() : 0,
    };

    private static void WriteAgreement(ref Writer w, in StreamAgreement a)
    {
        w.Bool(a.GyroIsolated);
        w.Long(a.GyroIsolatedSinceUs);
        w.Bool(a.CourseIsolated);
        w.Long(a.CourseIsolatedSinceUs);
        w.Int(a.TurnDisagreements);
        w.Int(a.TurnAgreements);
        w.Double(a.LastTurnMismatchRad);
        w.Double(a.LastTurnRad);
        w.Double(a.CourseOffsetRad);
        w.Long(a.TurnStartUs);
        w.Long(a.LastCourseUs);
        w.Double(a.LastCourseHeadingRad);
        w.Double(a.CourseTurnRad);
        w.Double(a.GyroTurnRad);
        w.Double(a.GyroCoveredS);
        w.Long(a.LastImuUs);
        w.Double(a.LastImuRateRps);
        w.Long(a.ChordStartUs);
        w.Double(a.ChordStartLatDeg);
        w.Double(a.ChordStartLonDeg);
        w.Double(a.ChordStartSigmaM);
        w.Double(a.ChordCourseSin);
        w.Double(a.ChordCourseCos);
        w.Int(a.ChordCourseSamples);
        for (int i = 0; i < ChordOffsetRing.Length; i++)
        {
            w.Double(a.Offsets[i]);
        }

        w.Int(a.OffsetCount);
        w.Int(a.OffsetNext);
    }

    private static StreamAgreement ReadAgreement(ref Reader r)
    {
        var a = new StreamAgreement
        {
            GyroIsolated = r.Bool(),
            GyroIsolatedSinceUs = r.Long(),
            CourseIsolated = r.Bool(),
            CourseIsolatedSinceUs = r.Long(),
            TurnDisagreements = r.Int(),
            TurnAgreements = r.Int(),
            LastTurnMismatchRad = r.Double(),
            LastTurnRad = r.Double(),
            CourseOffsetRad = r.Double(),
            TurnStartUs = r.Long(),
            LastCourseUs = r.Long(),
            LastCourseHeadingRad = r.Double(),
            CourseTurnRad = r.Double(),
            GyroTurnRad = r.Double(),
            GyroCoveredS = r.Double(),
            LastImuUs = r.Long(),
            LastImuRateRps = r.Double(),
            ChordStartUs = r.Long(),
            ChordStartLatDeg = r.Double(),
            ChordStartLonDeg = r.Double(),
            ChordStartSigmaM = r.Double(),
            ChordCourseSin = r.Double(),
            ChordCourseCos = r.Double(),
            ChordCourseSamples = r.Int(),
        };
        for (int i = 0; i < ChordOffsetRing.Length; i++)
        {
            a.Offsets[i] = r.Double();
        }

        a.OffsetCount = r.Int();
        a.OffsetNext = r.Int();
        return a;
    }

    private ref struct Writer(Span<byte> buffer)
    {
        private readonly Span<byte> _buffer = buffer;
        private int _at;

        public void Byte(byte v) => _buffer[_at++] = v;

        public void Bool(bool v) => Byte(v ? (byte)1 : (byte)0);

        public void Int(int v)
        {
            BinaryPrimitives.WriteInt32LittleEndian(_buffer[_at..], v);
            _at += 4;
        }

        public void Long(long v)
        {
            BinaryPrimitives.WriteInt64LittleEndian(_buffer[_at..], v);
            _at += 8;
        }

        public void Double(double v)
        {
            BinaryPrimitives.WriteDoubleLittleEndian(_buffer[_at..], v);
            _at += 8;
        }

        public void Float(float v)
        {
            BinaryPrimitives.WriteSingleLittleEndian(_buffer[_at..], v);
            _at += 4;
        }
    }

    private ref struct Reader(ReadOnlySpan<byte> data)
    {
        private readonly ReadOnlySpan<byte> _data = data;
        private int _at;

        public byte Byte() => _data[_at++];

        public bool Bool() => Byte() != 0;

        public int Int()
        {
            int v = BinaryPrimitives.ReadInt32LittleEndian(_data[_at..]);
            _at += 4;
            return v;
        }

        public long Long()
        {
            long v = BinaryPrimitives.ReadInt64LittleEndian(_data[_at..]);
            _at += 8;
            return v;
        }

        public double Double()
        {
            double v = BinaryPrimitives.ReadDoubleLittleEndian(_data[_at..]);
            _at += 8;
            return v;
        }

        public float Float()
        {
            float v = BinaryPrimitives.ReadSingleLittleEndian(_data[_at..]);
            _at += 4;
            return v;
        }
    }
}
