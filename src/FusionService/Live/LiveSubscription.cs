// One subscriber of the live hub.
using System.Threading.Channels;

namespace FusionService.Live;

/// <summary>
/// A subscriber's queue of frames (bounded: when the client reads too slowly the oldest frames are dropped, so a slow
/// browser can never hold memory or slow the publishers). Dispose to unsubscribe.
/// </summary>
/// <typeparam name="T">Frame type.</typeparam>
public sealed class LiveSubscription<T> : IDisposable
{
    private readonly Channel<T> _channel;
    private readonly Func<T, bool> _accept;
    private readonly Action<LiveSubscription<T>> _remove;

    internal LiveSubscription(Guid fleetId, Func<T, bool> accept, Action<LiveSubscription<T>> remove, int capacity)
    {
        FleetId = fleetId;
        _accept = accept;
        _remove = remove;
        _channel = Channel.CreateBounded<T>(new BoundedChannelOptions(capacity) { FullMode = BoundedChannelFullMode.DropOldest, SingleReader = true });
    }

    /// <summary>The fleet whose frames this subscriber receives.</summary>
    public Guid FleetId { get; }

    /// <summary>The frames.</summary>
    public ChannelReader<T> Reader => _channel.Reader;

    /// <inheritdoc />
    public void Dispose()
    {
        _remove(this);
        _channel.Writer.TryComplete();
    }

    internal void Offer(T frame)
    {
        if (_accept(frame))
        {
            _channel.Writer.TryWrite(frame);
        }
    }
}
