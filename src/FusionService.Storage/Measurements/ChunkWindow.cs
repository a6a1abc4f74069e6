// The measurements of one ten-minute window, gathered from the chunks that hold them, handed over in canonical order.
namespace FusionService.Storage.Measurements;

/// <summary>
/// Gathers the measurements a range read takes from a vehicle's chunks, which arrive in order of their first time: a
/// chunk lies in one aligned ten-minute window (migration 0013) and windows do not overlap, so a window is complete when
/// a chunk of the next one arrives. Its measurements are then handed over in canonical order, sorted only when more
/// than one chunk (more than one commit: late or resent data) held them.
/// </summary>
/// <typeparam name="T">What the read hands over per measurement.</typeparam>
/// <param name="canonical">Canonical order: time, then kind, then message key.</param>
internal sealed class ChunkWindow<T>(Comparison<T> canonical)
{
    private List<T> _items = [];
    private List<T> _closed = [];
    private long _window = long.MinValue;
    private int _chunks;

    /// <summary>
    /// Begins a chunk whose first measurement time is <paramref name="firstUs"/>. Returns the measurements of the window
    /// this chunk closes, in canonical order (empty while the chunk stays in the current window); the list is reused by
    /// the next call.
    /// </summary>
    public List<T> Begin(long firstUs)
    {
        long window = MeasurementChunks.WindowOf(firstUs);
        if (window == _window)
        {
            _chunks++;
            _closed.Clear();
            return _closed;
        }

        var closed = Close();
        _window = window;
        _chunks = 1;
        return closed;
    }

    /// <summary>Adds a measurement of the current chunk.</summary>
    public void Add(T item) => _items.Add(item);

    /// <summary>Closes the current window and returns its measurements in canonical order (the list is reused).</summary>
    public List<T> Close()
    {
        if (_chunks > 1)
        {
            _items.Sort(canonical);
        }

        (_closed, _items) = (_items, _closed);
        _items.Clear();
        _chunks = 0;
        return _closed;
    }
}
