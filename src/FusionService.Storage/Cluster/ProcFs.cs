// Reads process facts from Linux /proc to tell a live postmaster from a stale pid file.
using System.Globalization;

namespace FusionService.Storage.Cluster;

/// <summary>Process inspection through Linux procfs. Every method answers "unknown" (null or empty) when
/// /proc is absent or the process belongs to an account this process may not inspect.</summary>
internal static class ProcFs
{
    /// <summary>The command name (<c>/proc/PID/comm</c>) of process <paramref name="pid"/>, or null.</summary>
    public static string? CommandName(int pid)
    {
        try
        {
            return File.ReadAllText(Path.Combine("/proc", pid.ToString(CultureInfo.InvariantCulture), "comm")).Trim();
        }
        catch (IOException)
        {
            return null;
        }
        catch (UnauthorizedAccessException)
        {
            return null;
        }
    }

    /// <summary>
    /// When process <paramref name="pid"/> started, in clock ticks after boot (field 22 of <c>/proc/PID/stat</c>,
    /// proc(5)), or null. A PID with the same start time is the same process, not a later one that reused the number.
    /// </summary>
    public static long? StartTime(int pid)
    {
        string stat;
        try
        {
            stat = File.ReadAllText(Path.Combine("/proc", pid.ToString(CultureInfo.InvariantCulture), "stat"));
        }
        catch (IOException)
        {
            return null;
        }
        catch (UnauthorizedAccessException)
        {
            return null;
        }

        // The command name (field 2) is in parentheses and may hold spaces: count fields after its closing one.
        int close = stat.LastIndexOf(')');
        var fields = close < 0 ? [] : stat[(close + 1)..].Split(' ', StringSplitOptions.RemoveEmptyEntries);
        return fields.Length > 19 && long.TryParse(fields[19], NumberStyles.None, CultureInfo.InvariantCulture, out long ticks) ? ticks : null;
    }

    /// <summary>The working directory of process <paramref name="pid"/>, or null when it cannot be read.</summary>
    public static string? WorkingDirectory(int pid)
    {
        try
        {
            var link = Path.Combine("/proc", pid.ToString(CultureInfo.InvariantCulture), "cwd");
            return Directory.ResolveLinkTarget(link, returnFinalTarget: false)?.FullName;
        }
        catch (IOException)
        {
            return null;
        }
        catch (UnauthorizedAccessException)
        {
            return null;
        }
    }

    /// <summary>
    /// <paramref name="path"/> made absolute with every symbolic link resolved, as the kernel reports a
    /// process's working directory. Parts that do not exist are kept as written.
    /// </summary>
    public static string RealPath(string path) => RealPath(Path.GetFullPath(path), depth: 0);

    private static string RealPath(string fullPath, int depth)
    {
        // 40 is the kernel's own limit on links followed in one lookup (MAXSYMLINKS).
        if (depth > 40)
        {
            return fullPath;
        }

        var resolved = Path.GetPathRoot(fullPath) ?? "/";
        foreach (var part in fullPath[resolved.Length..].Split('/', StringSplitOptions.RemoveEmptyEntries))
        {
            var next = Path.Combine(resolved, part);
            var target = new FileInfo(next).LinkTarget;
            resolved = target is null
                ? next
                : RealPath(Path.GetFullPath(target, resolved), depth + 1);
        }

        return resolved;
    }

    /// <summary>Processes whose working directory is <paramref name="directory"/>. Every PostgreSQL server
    /// process changes into its data directory, so these are the server processes of that cluster (including
    /// orphaned backends whose postmaster died).</summary>
    public static IReadOnlyList<int> ProcessesWorkingIn(string directory)
    {
        var wanted = Path.TrimEndingDirectorySeparator(RealPath(directory));
        var found = new List<int>();
        if (!Directory.Exists("/proc"))
        {
            return found;
        }

        foreach (var entry in Directory.EnumerateDirectories("/proc"))
        {
            if (!int.TryParse(Path.GetFileName(entry), NumberStyles.None, CultureInfo.InvariantCulture, out var pid))
            {
                continue;
            }

            var cwd = WorkingDirectory(pid);
            if (cwd is not null && string.Equals(Path.TrimEndingDirectorySeparator(cwd), wanted, StringComparison.Ordinal))
            {
                found.Add(pid);
            }
        }

        return found;
    }
}
