using FusionService.Estimation.Measurements;
using static FusionService.Estimation.Models.StateIndex;

namespace FusionService.Estimation.Tracking;

/// <summary>
/// Recognises a vehicle that moves without driving — towed, on a ferry, lifted — from its GNSS speed and its wheels:
/// Doppler speed at or above <see cref="TrackOptions.CarriedMinSpeedMps"/> for <see cref="TrackOptions.CarriedAfterS"/>
/// while every wheel sample reads zero. While carried the wheel and the standstill constraint, which would hold the track
/// still, are set aside and the track follows GNSS; the carry ends when the wheels turn or when GNSS speed stays below the
/// threshold for <see cref="TrackOptions.CarriedEndAfterS"/>.
/// </summary>
/// <remarks>
/// GNSS speed rather than position is the evidence because a receiver's Doppler velocity is far less disturbed by
/// multipath than its position (common practice), so a parked van beside a building, whose fixes wander by tens of
/// metres, is never taken for a carried one. When a carry is recognised the standstill constraint has pinned speed at
/// zero and the gated fixes have left the position behind; speed, heading and acceleration are re-initialised from the
/// GNSS velocity (their correlations dropped; that sample is used to initialise, not fused) and the position variance is
/// raised by the square of the distance the vehicle may have covered while the evidence built up, so the next fixes are
/// fused rather than gated into a reset. The track's smoothing starts a new segment there, as after a reset.
/// </remarks>
internal static class CarriedMotion
{
    private const double MicrosecondsPerSecond = 1e6;
    private const int TrackStateSize = LinearAlgebra.StateMatrix.Size;

    /// <summary>
    /// Takes a GNSS velocity sample as evidence for or against a carry; returns true when the vehicle has just been
    /// recognised as carried, after which the caller must re-initialise the motion (<see cref="Begin"/>).
    /// </summary>
    internal static bool Observe(ref TrackState s, in Measurement m, TrackOptions options)
    {
        GnssVelocityView velocity = m.AsGnssVelocity();
        double speedMps = velocity.SpeedMps;
        bool moving = speedMps >= options.CarriedMinSpeedMps && speedMps >= 3.0 * velocity.SpeedAccuracyMps;
        if (s.Carried)
        {
            if (moving)
            {
                s.CarrySlow = 0;
                return false;
            }

            if (s.CarrySlow++ == 0)
            {
                s.CarrySlowSinceUs = m.TimeUs;
            }

            if ((m.TimeUs - s.CarrySlowSinceUs) / MicrosecondsPerSecond >= options.CarriedEndAfterS)
            {
                End(ref s);
            }

            return false;
        }

        if (!moving || s.WheelZeroSinceUs == long.MinValue)
        {
            s.CarryEvidence = 0;
            return false;
        }

        if (s.CarryEvidence++ == 0)
        {
            s.CarryEvidenceSinceUs = m.TimeUs;
        }

        if ((m.TimeUs - s.CarryEvidenceSinceUs) / MicrosecondsPerSecond < options.CarriedAfterS || s.CarryEvidence < 2)
        {
            return false;
        }

        s.Carried = true;
        s.CarriedSinceUs = s.CarryEvidenceSinceUs;
        s.CarryEvidence = 0;
        s.CarrySlow = 0;
        s.Stationary = false;
        return true;
    }

    /// <summary>
    /// Re-initialises speed, heading and acceleration from the GNSS velocity <paramref name="m"/> and widens the position
    /// by the distance possibly covered since the carry began (see the remarks).
    /// </summary>
    internal static void Begin(ref TrackState s, in Measurement m, double headingRad, double headingSigmaRad, double initialAccelSigmaMps2)
    {
        const int n = TrackStateSize;
        GnssVelocityView velocity = m.AsGnssVelocity();
        double speedMps = velocity.SpeedMps;
        double elapsedS = (m.TimeUs - s.CarriedSinceUs) / MicrosecondsPerSecond;
        double coveredM = speedMps * Math.Max(elapsedS, 1.0);
        Reinitialise(ref s, SpeedMps, speedMps, velocity.SpeedAccuracyMps * velocity.SpeedAccuracyMps);
        Reinitialise(ref s, AccelMps2, 0.0, initialAccelSigmaMps2 * initialAccelSigmaMps2);
        if (double.IsFinite(headingRad))
        {
            Reinitialise(ref s, HeadingRad, headingRad, headingSigmaRad * headingSigmaRad);
        }

        s.P[(EastM * n) + EastM] += coveredM * coveredM;
        s.P[(NorthM * n) + NorthM] += coveredM * coveredM;
    }

    /// <summary>A wheel sample while carried: true when the wheels turn, which ends the carry (the vehicle drives again).</summary>
    internal static bool WheelsTurn(ref TrackState s, in Measurement m, TrackOptions options)
    {
        if (Math.Abs(m.AsWheelSpeed().SpeedMps) <= options.ZeroSpeedThresholdMps)
        {
            return false;
        }

        End(ref s);
        return true;
    }

    private static void End(ref TrackState s)
    {
        s.Carried = false;
        s.CarrySlow = 0;
        s.CarryEvidence = 0;
    }

    private static void Reinitialise(ref TrackState s, int i, double value, double variance)
    {
        const int n = TrackStateSize;
        s.X[i] = value;
        for (int j = 0; j < n; j++)
        {
            s.P[(i * n) + j] = 0;
            s.P[(j * n) + i] = 0;
        }

        s.P[(i * n) + i] = variance;
    }
}
