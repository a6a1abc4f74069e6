// A count of this process's measurement commits, to tell which committed batches a track's restore already holds.
namespace FusionService.Ingest;

/// <summary>
/// Counts the group commits of this process: <see cref="Advance"/> after each commit has returned, so a commit's number
/// is at most <see cref="Now"/> only when the commit finished before <see cref="Now"/> was read. A track that reads
/// <see cref="Now"/> before reading the store at activation therefore holds every batch whose number is at most that
/// value, and can skip those batches when their delivery arrives afterwards (a batch more than the replay window
/// behind would otherwise be judged too late). Numbers mean something only inside one process:
/// <see cref="InstanceId"/> tells the processes apart.
/// </summary>
public sealed class CommitClock
{
    private long _now;

    /// <summary>Identifies this process's count.</summary>
    public Guid InstanceId { get; } = Guid.NewGuid();

    /// <summary>The number of the newest finished commit (0 before the first).</summary>
    public long Now => Interlocked.Read(ref _now);

    /// <summary>Numbers a commit that has just returned.</summary>
    public long Advance() => Interlocked.Increment(ref _now);
}
