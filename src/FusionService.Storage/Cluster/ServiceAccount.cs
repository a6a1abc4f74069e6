// Decides whether PostgreSQL tools must run as the postgres account, and prepares folders for it.
using System.Globalization;

namespace FusionService.Storage.Cluster;

/// <summary>
/// The operating-system account the cluster runs under. PostgreSQL's <c>initdb</c> and <c>postgres</c> refuse to
/// run as root, so a root caller runs every tool through <c>runuser -u postgres --</c> on folders owned by
/// <c>postgres</c>; any other caller runs the tools as itself.
/// </summary>
internal sealed class ServiceAccount
{
    /// <summary>Name of the account that owns the cluster when the caller is root.</summary>
    public const string PostgresUser = "postgres";

    private static readonly TimeSpan ToolTimeout = TimeSpan.FromSeconds(30);

    private ServiceAccount(bool switchUser, string runUserPath)
    {
        SwitchUser = switchUser;
        RunUserPath = runUserPath;
    }

    /// <summary>True when tools run through <c>runuser</c> as <see cref="PostgresUser"/>.</summary>
    public bool SwitchUser { get; }

    /// <summary>Path of <c>runuser</c>; empty when <see cref="SwitchUser"/> is false.</summary>
    public string RunUserPath { get; }

    /// <summary>Inspects the current process: root (effective uid 0) switches to the postgres account.</summary>
    /// <exception cref="EmbeddedPostgresException">Root without <c>runuser</c>.</exception>
    public static ServiceAccount Detect()
    {
        if (!IsRoot())
        {
            return new ServiceAccount(switchUser: false, runUserPath: string.Empty);
        }

        var runUser = ExecutableLocator.Find("runuser", "/usr/sbin", "/sbin", "/usr/bin", "/bin")
            ?? throw new EmbeddedPostgresException(
                "Running as root, but 'runuser' was not found (looked in /usr/sbin, /sbin, /usr/bin, /bin and PATH); "
                + "PostgreSQL refuses to run as root, so its tools must be started as the 'postgres' account.");
        return new ServiceAccount(switchUser: true, runUserPath: runUser);
    }

    /// <summary>Creates <paramref name="folder"/> if needed and makes it writable by the cluster's account.</summary>
    /// <exception cref="EmbeddedPostgresException">The postgres account cannot write to the folder.</exception>
    public async Task PrepareFolderAsync(string folder, CancellationToken cancellationToken)
    {
        Directory.CreateDirectory(folder);
        if (!SwitchUser)
        {
            return;
        }

        var chown = ExecutableLocator.Find("chown", "/usr/bin", "/bin")
            ?? throw new EmbeddedPostgresException("Running as root, but 'chown' was not found on PATH.");
        var owner = await ProcessRunner.RunAsync(
            Direct, chown, [PostgresUser + ":", folder], ToolTimeout, cancellationToken).ConfigureAwait(false);
        if (owner.ExitCode != 0)
        {
            throw new EmbeddedPostgresException(string.Create(
                CultureInfo.InvariantCulture,
                $"Could not give folder '{folder}' to the '{PostgresUser}' account (does the account exist?): {owner.Diagnostics}"));
        }

        var test = ExecutableLocator.Find("test", "/usr/bin", "/bin")
            ?? throw new EmbeddedPostgresException("Running as root, but 'test' was not found on PATH.");
        var writable = await ProcessRunner.RunAsync(
            this, test, ["-w", folder], ToolTimeout, cancellationToken).ConfigureAwait(false);
        if (writable.ExitCode != 0)
        {
            throw new EmbeddedPostgresException(string.Create(
                CultureInfo.InvariantCulture,
                $"The '{PostgresUser}' account cannot write to '{folder}'. Every parent folder must be searchable "
                + $"by it (for example a folder under /tmp works, one under /root does not). {writable.Diagnostics}"));
        }
    }

    /// <summary>An account value that runs tools directly as the current user.</summary>
    public static ServiceAccount Direct { get; } = new(switchUser: false, runUserPath: string.Empty);

    private static bool IsRoot()
    {
        // /proc/self/status: "Uid:\t<real>\t<effective>\t<saved>\t<fs>"; the effective uid decides.
        try
        {
            foreach (var line in File.ReadLines("/proc/self/status"))
            {
                if (line.StartsWith("Uid:", StringComparison.Ordinal))
                {
                    var fields = line.Split((char[])['\t', ' '], StringSplitOptions.RemoveEmptyEntries);
                    return fields.Length >= 3 && string.Equals(fields[2], "0", StringComparison.Ordinal);
                }
            }
        }
        catch (IOException)
        {
            // No procfs (not Linux): fall back to the account name.
        }
        catch (UnauthorizedAccessException)
        {
            // Same fallback.
        }

        return string.Equals(Environment.UserName, "root", StringComparison.Ordinal);
    }
}
