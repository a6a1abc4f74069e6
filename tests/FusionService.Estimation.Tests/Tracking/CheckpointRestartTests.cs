using FusionService.Estimation.Measurements;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;

namespace FusionService.Estimation.Tests.Tracking;

/// <summary>A track rebuilt from its persisted base checkpoint and the measurements after it equals the uninterrupted track, bit for bit.</summary>
public sealed class CheckpointRestartTests
{
    [Theory]
    [InlineData(90.0)]
    [InlineData(157.3)]
    [InlineData(230.0)]
    public void Rebuilt_track_equals_the_uninterrupted_one(double crashAfterS)
    {
        var drive = SimpleDrive.Create(seed: 71, durationS: 300, gyroBiasRps: 0.003, stopFromS: 200);
        var processor = new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan);
        var uninterrupted = new VehicleTrack(processor);
        var beforeCrash = new VehicleTrack(processor);
        long crashUs = SimpleDrive.StartUs + (long)(crashAfterS * 1e6);
        foreach (Measurement m in drive.Measurements)
        {
            uninterrupted.Process(m);
            if (m.TimeUs <= crashUs)
            {
                beforeCrash.Process(m);
            }
        }

        var (state, last) = beforeCrash.BaseCheckpoint;
        Assert.NotNull(last);
        byte[] stored = TrackStateCodec.Encode(state, last.Value);
        Assert.Equal(TrackStateCodec.EncodedLength, stored.Length);
        var (restoredState, restoredLast) = TrackStateCodec.Decode(stored);
        OrderIndependenceTests.AssertBitwiseEqual(state, restoredState);
        Assert.Equal(last.Value, restoredLast);

        var rebuilt = new VehicleTrack(processor, restoredState, restoredLast);
        foreach (Measurement m in drive.Measurements.Where(m => VehicleTrack.CompareKey(m, restoredLast) > 0))
        {
            rebuilt.Process(m);
        }

        Assert.Equal(OutcomeKind.TooLate, rebuilt.Process(restoredLast).Kind);
        OrderIndependenceTests.AssertBitwiseEqual(uninterrupted.Current, rebuilt.Current);
    }

    /// <summary>A track given its own starting receiver pair keeps it through a checkpoint (replays from it must use it).</summary>
    [Fact]
    public void A_checkpoint_keeps_the_receiver_pair_the_track_started_from()
    {
        byte[] stored = TrackStateCodec.Encode(TrackState.StartingFrom(0.9, 110.0), Measurement.WheelSpeed(1, 1, 0));
        var (state, _) = TrackStateCodec.Decode(stored);
        Assert.Equal(0.9, state.GnssErrorFit.StartShare);
        Assert.Equal(110.0, state.GnssErrorFit.StartTimeConstantS);
    }

    /// <summary>
    /// A checkpoint written before the fit's starting pair was stored (format 7: the same bytes without those two
    /// doubles) decodes to the state it held, the pair read as none (the profile's, which such tracks started from), so
    /// that an upgrade restores tracks instead of replaying their kept days.
    /// </summary>
    [Fact]
    public void A_version_7_checkpoint_decodes_as_a_track_that_started_from_the_profile()
    {
        var drive = SimpleDrive.Create(seed: 71, durationS: 300, gyroBiasRps: 0.003, stopFromS: 200);
        var track = new VehicleTrack(new TrackProcessor(new TrackOptions(), NoiseProfile.DeliveryVan));
        foreach (Measurement m in drive.Measurements)
        {
            track.Process(m);
        }

        var (state, last) = track.BaseCheckpoint;
        Assert.NotNull(last);
        byte[] current = TrackStateCodec.Encode(state, last.Value);
        // Where the pair lies: the first byte that differs when the share is 0.3 (its lowest byte 0x33) instead of 0.
        TrackState marked = state;
        marked.GnssErrorFit.StartShare = 0.3;
        int at = current.AsSpan().CommonPrefixLength(TrackStateCodec.Encode(marked, last.Value));
        byte[] previous = [.. current[..at], .. current[(at + 16)..]];
        previous[0] = TrackStateCodec.PreviousVersion;

        var (decoded, decodedLast) = TrackStateCodec.Decode(previous);

        OrderIndependenceTests.AssertBitwiseEqual(state, decoded);
        Assert.Equal(last.Value, decodedLast);
        Assert.True(TrackStateCodec.CanDecode(7) && TrackStateCodec.CanDecode(8) && !TrackStateCodec.CanDecode(6));
        // The current version at the earlier length is neither.
        byte[] mislabelled = [.. previous];
        mislabelled[0] = TrackStateCodec.Version;
        Assert.Throws<FormatException>(() => TrackStateCodec.Decode(mislabelled));
    }

    [Fact]
    public void Decoding_rejects_a_wrong_version_or_length()
    {
        byte[] stored = TrackStateCodec.Encode(TrackState.Empty, Measurement.WheelSpeed(1, 1, 0));
        stored[0] = 99;
        Assert.Throws<FormatException>(() => TrackStateCodec.Decode(stored));
        Assert.Throws<FormatException>(() => TrackStateCodec.Decode(stored.AsSpan(0, 10)));
    }
}
