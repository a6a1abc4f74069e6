// In-process publish/subscribe of alert changes and fused positions.
using System.Collections.Concurrent;
using FusionService.Alerts;

namespace FusionService.Live;

/// <summary>
/// The in-process hub behind the WebSocket streams: track grains publish fused positions and the alert publisher
/// publishes alert changes; each subscriber sees its own fleet's frames only. It lives in one process: in a
/// multi-silo deployment a grain may run in another process than the WebSocket, so the hub would have to be replaced by
/// an Orleans stream provider (or another broker) carrying the same frames between silos.
/// </summary>
public sealed class LiveHub
{
    private const int Capacity = 1024;
    private readonly ConcurrentDictionary<LiveSubscription<AlertResponse>, byte> _alerts = new();
    private readonly ConcurrentDictionary<LiveSubscription<PositionUpdate>, byte> _positions = new();

    /// <summary>Number of open subscriptions (both streams).</summary>
    public int SubscriberCount => _alerts.Count + _positions.Count;

    /// <summary>Subscribes to new and changed alerts of <paramref name="fleetId"/>.</summary>
    public LiveSubscription<AlertResponse> SubscribeAlerts(Guid fleetId)
    {
        var subscription = new LiveSubscription<AlertResponse>(fleetId, _ => true, s => _alerts.TryRemove(s, out _), Capacity);
        _alerts[subscription] = 0;
        return subscription;
    }

    /// <summary>
    /// Subscribes to fused positions of <paramref name="fleetId"/>, only those inside <paramref name="box"/> (when given),
    /// and per vehicle at most one frame per <paramref name="minIntervalMs"/> of data time.
    /// </summary>
    public LiveSubscription<PositionUpdate> SubscribePositions(Guid fleetId, BoundingBox? box, int minIntervalMs)
    {
        var lastSent = new ConcurrentDictionary<string, DateTimeOffset>(StringComparer.Ordinal);
        var interval = TimeSpan.FromMilliseconds(minIntervalMs);
        bool Accept(PositionUpdate p)
        {
            if (box is { } b && !b.Contains(p.LatDeg, p.LonDeg))
            {
                return false;
            }

            if (lastSent.TryGetValue(p.Vehicle, out var last) && p.Time - last < interval && p.Time >= last)
            {
                return false;
            }

            lastSent[p.Vehicle] = p.Time;
            return true;
        }

        var subscription = new LiveSubscription<PositionUpdate>(fleetId, Accept, s => _positions.TryRemove(s, out _), Capacity);
        _positions[subscription] = 0;
        return subscription;
    }

    /// <summary>Offers an alert change to the subscribers of its fleet.</summary>
    public void PublishAlert(AlertResponse alert)
    {
        ArgumentNullException.ThrowIfNull(alert);
        foreach (var s in _alerts.Keys)
        {
            if (s.FleetId == alert.FleetId)
            {
                s.Offer(alert);
            }
        }
    }

    /// <summary>Offers a fused position of <paramref name="fleetId"/> to that fleet's subscribers.</summary>
    public void PublishPosition(Guid fleetId, PositionUpdate position)
    {
        ArgumentNullException.ThrowIfNull(position);
        foreach (var s in _positions.Keys)
        {
            if (s.FleetId == fleetId)
            {
                s.Offer(position);
            }
        }
    }
}
