// Lowers the scheduling weight of a PostgreSQL backend of the embedded cluster (the history reads' connections).
using System.Globalization;

namespace FusionService.Database;

/// <summary>
/// Sets the autogroup nice value of one PostgreSQL backend process on this machine, so that the history reads' backends
/// get a core only when ingest's backends and the service do not want it (<c>Database:LowReadBackendPriority</c>).
/// </summary>
/// <remarks>
/// Linux with autogrouping (<c>/proc/sys/kernel/sched_autogroup_enabled</c> 1) shares the processor between sessions
/// first and only inside a session by nice value. Every PostgreSQL backend starts a session of its own (<c>setsid</c>),
/// so a backend's own nice value orders it against nothing; the weight of its autogroup, set by writing a nice value to
/// <c>/proc/PID/autogroup</c> (sched(7), "The autogroup feature"), orders it against every other session. Only a backend
/// that is a child of the given postmaster and leads its own session is touched (its autogroup holds itself alone); the
/// writer needs to be root or the backend's owner.
/// </remarks>
internal static class BackendPriority
{
    /// <summary>The autogroup nice value given: the lowest weight (15 against 1,024 for nice 0).</summary>
    internal const int LowestNice = 19;

    /// <summary>
    /// Sets the autogroup nice of <paramref name="pid"/> to <see cref="LowestNice"/> if it is a child of
    /// <paramref name="postmasterPid"/> leading its own session; whether it did. Throws <see cref="IOException"/> or
    /// <see cref="UnauthorizedAccessException"/> when the system refuses the write.
    /// </summary>
    /// <param name="pid">The backend's process id (<c>pg_backend_pid()</c>).</param>
    /// <param name="postmasterPid">The cluster's postmaster (first line of <c>postmaster.pid</c>).</param>
    internal static bool Lower(int pid, int postmasterPid)
    {
        string autogroup = $"/proc/{pid.ToString(CultureInfo.InvariantCulture)}/autogroup";
        if (!OperatingSystem.IsLinux() || !File.Exists(autogroup) || StatOf(pid) is not { } stat
            || stat.ParentPid != postmasterPid || stat.SessionId != pid)
        {
            return false;
        }

        File.WriteAllText(autogroup, LowestNice.ToString(CultureInfo.InvariantCulture));
        return true;
    }

    /// <summary>Parent and session of a process from <c>/proc/PID/stat</c> (fields 4 and 6, proc(5)); null when it is gone.</summary>
    private static (int ParentPid, int SessionId)? StatOf(int pid)
    {
        string text;
        try
        {
            text = File.ReadAllText($"/proc/{pid.ToString(CultureInfo.InvariantCulture)}/stat");
        }
        catch (IOException)
        {
            return null;
        }

        // The command name (field 2) is in parentheses and may hold spaces: the fields after it start past the last ')'.
        string[] rest = text[(text.LastIndexOf(')') + 2)..].Split(' ');
        return (int.Parse(rest[1], CultureInfo.InvariantCulture), int.Parse(rest[3], CultureInfo.InvariantCulture));
    }
}
