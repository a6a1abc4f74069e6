// One WebSocket stream's hold on the watch of its API key.
namespace FusionService.Security;

/// <summary>A stream's hold on its key's watch (<see cref="StreamKeyWatch.Watch"/>); dispose it when the stream ends.</summary>
public sealed class StreamKeyLease : IDisposable
{
    private readonly Action _release;
    private int _disposed;

    internal StreamKeyLease(Action release, CancellationToken token)
    {
        _release = release;
        Token = token;
    }

    /// <summary>Cancelled when the key is revoked or expires.</summary>
    public CancellationToken Token { get; }

    /// <inheritdoc />
    public void Dispose()
    {
        if (Interlocked.Exchange(ref _disposed, 1) == 0)
        {
            _release();
        }
    }
}
