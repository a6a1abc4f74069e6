// Prints the feeder's progress as one line per report.
namespace FusionService.Simulator.Feeding;

/// <summary>
/// An <see cref="IProgress{T}"/> that writes <see cref="FeedProgress.ToSummaryLine"/> to a text writer (the console by
/// default) once per report; the feeder reports once per <see cref="FleetFeederOptions.ProgressInterval"/> and at the end.
/// </summary>
public sealed class FeedSummaryWriter : IProgress<FeedProgress>
{
    private readonly TextWriter _writer;
    private readonly Lock _gate = new();

    /// <summary>Creates a writer.</summary>
    /// <param name="writer">Destination; null for <see cref="Console.Out"/>.</param>
    public FeedSummaryWriter(TextWriter? writer = null)
    {
        _writer = writer ?? Console.Out;
    }

    /// <summary>The last progress written, or null.</summary>
    public FeedProgress? Last { get; private set; }

    /// <inheritdoc/>
    public void Report(FeedProgress value)
    {
        ArgumentNullException.ThrowIfNull(value);
        lock (_gate)
        {
            Last = value;
            _writer.WriteLine(value.ToSummaryLine());
        }
    }
}
