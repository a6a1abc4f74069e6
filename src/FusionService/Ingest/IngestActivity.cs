// When ingest last committed: lets work that yields to ingest run at full speed while there is none.
using System.Diagnostics;

namespace FusionService.Ingest;

/// <summary>
/// The time of the newest group commit of this process (<see cref="GroupCommitWriter"/>), so that work throttled to leave
/// ingest its processor time (the history reads' replays, <c>History/ReplayCpuBudget</c>) is throttled only while
/// there is ingest to protect.
/// </summary>
public sealed class IngestActivity
{
    // Stopwatch timestamp of the newest commit; 0 before the first (Stopwatch timestamps are far larger).
    private long _lastCommit;

    /// <summary>Notes a commit now.</summary>
    public void MarkCommitted() => Volatile.Write(ref _lastCommit, Stopwatch.GetTimestamp());

    /// <summary>Whether a commit happened within <paramref name="window"/> before now.</summary>
    public bool CommittedWithin(TimeSpan window)
    {
        long last = Volatile.Read(ref _lastCommit);
        return last != 0 && Stopwatch.GetElapsedTime(last) <= window;
    }
}
