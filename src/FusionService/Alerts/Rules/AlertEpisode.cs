// One open (or not yet opened) alert of one kind for one vehicle.
using System.Text.Json.Nodes;
using FusionService.Storage.Alerts;

namespace FusionService.Alerts.Rules;

/// <summary>
/// The episode a rule keeps for its kind: whether it is open, since when (data time), the newest data time it was seen,
/// its count, summary and details, and whether it changed since the changes were last taken.
/// </summary>
internal sealed class AlertEpisode
{
    /// <summary>Whether the alert is open.</summary>
    public bool Open { get; set; }

    /// <summary>Whether it changed since <see cref="VehicleAlertRule.TakeChange"/> last reported it.</summary>
    public bool Dirty { get; set; }

    /// <summary>Start, µs since the Unix epoch (data time).</summary>
    public long StartUs { get; set; }

    /// <summary>Newest data time it was seen at, µs since the Unix epoch.</summary>
    public long LastUs { get; set; } = long.MinValue;

    /// <summary>Data time its summary and details were last refreshed, µs since the Unix epoch (rules that refresh them at most once a minute).</summary>
    public long DetailsUs { get; set; } = long.MinValue;

    /// <summary>Count of what it grouped so far.</summary>
    public int Count { get; set; }

    /// <summary>Plain-language summary.</summary>
    public string Summary { get; set; } = string.Empty;

    /// <summary>Details with the numbers behind it, or null.</summary>
    public JsonObject? Details { get; set; }

    /// <summary>Opens the episode at <paramref name="startUs"/> unless it is open, widens it to <paramref name="startUs"/> and <paramref name="seenUs"/>, and marks it changed.</summary>
    public void Raise(long startUs, long seenUs)
    {
        if (!Open)
        {
            Open = true;
            StartUs = startUs;
            Count = 0;
        }

        StartUs = Math.Min(StartUs, startUs);
        LastUs = Math.Max(LastUs, seenUs);
        Dirty = true;
    }

    /// <summary>The episode as the observation the store applies.</summary>
    public AlertObservation ToObservation(string kind, bool resolve) => new(
        kind,
        AlertKinds.SeverityOf(kind),
        AlertText.ToTime(StartUs),
        AlertText.ToTime(Math.Max(StartUs, LastUs)),
        Math.Max(1, Count),
        Summary,
        (Details ?? []).ToJsonString(),
        resolve);
}
