// The receivers' GNSS error model the tracks assume: the correlated share, its time constant and the per-vehicle fit.
using System.ComponentModel.DataAnnotations;
using FusionService.Estimation.Models;

namespace FusionService.Tracking;

/// <summary>
/// Settings of section <c>GnssErrorModel</c>: how the tracks model the error of the GNSS fixes, a first-order
/// Gauss-Markov part (a share of the reported accuracy's variance, correlated over a time constant) plus a white part
/// (docs/estimation.md, "Time-correlated GNSS error"). The defaults suit consumer receivers; a fleet whose receivers
/// differ holds its 95 % ellipses only with its own values (one fixed pair held 84.4-99.6 % over receivers with time
/// constants of 20-120 s and shares of 50-95 %), which `FitPerVehicle` (on by default) finds per track from the fixes of
/// a standing vehicle. A change applies to the tracks after the next start of the service and to every replay after it (smoothed
/// tracks, explanations): stored outcomes keep the model they were judged with.
/// </summary>
public sealed class GnssErrorModelOptions
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "GnssErrorModel";

    /// <summary>
    /// Share of the reported accuracy's variance that is correlated in time; the rest is white. Default 0.75: consumer
    /// receivers' errors are dominated by slowly varying atmospheric, orbit and clock errors and multipath (common practice).
    /// </summary>
    [Range(0.01, 0.99)]
    public double CorrelatedShare { get; set; } = NoiseProfile.DeliveryVan.GnssCorrelatedFraction;

    /// <summary>
    /// Time constant of the correlated part, seconds. Default 60: real errors decorrelate over tens of seconds to minutes
    /// (common practice).
    /// </summary>
    [Range(1, 3600)]
    public double TimeConstantS { get; set; } = NoiseProfile.DeliveryVan.GnssErrorTimeConstantS;

    /// <summary>
    /// Whether each track fits its receiver's share and time constant from the fixes it reports while the vehicle stands,
    /// starting from the two values above and keeping the fit from round to round. Default true: one fixed pair does not
    /// hold the 95 % ellipse over receivers unlike it, the fit does once it has seen a few rounds of stops; a receiver
    /// that reports only HDOP keeps the two values above (docs/estimation.md, "Each receiver's own share and time
    /// constant"). False pins every new track to the two values (a track keeps a fit or a fleet start it already carries).
    /// </summary>
    public bool FitPerVehicle { get; set; } = NoiseProfile.DeliveryVan.GnssErrorIdentification;

    /// <summary>
    /// How many of a fleet's other vehicles must hold a fit on at least as much evidence of their own as the prior weighs
    /// (<see cref="GnssErrorVariogram.PriorLongPairs"/> long-lag terms, about ten minutes of standing) before a vehicle the
    /// fleet has not had before starts its fit from their median share and median time constant instead of the two values
    /// above. Default 3: on the receiver that is over-confident from the two values (errors correlated over 120 s with
    /// 80-95 % of their variance) a new van's first round then holds the band (docs/estimation.md, "A new vehicle starts
    /// from its fleet's receivers"). Decided once per vehicle, before its first measurement is filtered, and kept; 0 turns
    /// it off, and so does <see cref="FitPerVehicle"/> false.
    /// </summary>
    [Range(0, 1000)]
    public int FleetStartMinVehicles { get; set; } = 3;

    /// <summary>The delivery-van noise profile with this model.</summary>
    public NoiseProfile ToProfile() => NoiseProfile.DeliveryVan with
    {
        GnssCorrelatedFraction = CorrelatedShare,
        GnssErrorTimeConstantS = TimeConstantS,
        GnssErrorIdentification = FitPerVehicle,
    };
}
