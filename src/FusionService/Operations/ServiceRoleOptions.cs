// Settings of section Service: the process's role.
namespace FusionService.Operations;

/// <summary>
/// Section <c>Service</c>, read once when the host is built (what is registered and mapped depends on it).
/// </summary>
/// <remarks>
/// A history-read process takes the smoothing replays, the heaviest work of the service, off the processes that
/// ingest: on another machine entirely; on the same one, at the lowest processor weight, their acknowledgements wait
/// less behind the reads than with the reads in their own process, but still wait (docs/limits-and-keys.md, "A
/// history-read process"). Everything it answers is read from the
/// store the ingesting processes write, so its answers are theirs. It joins no cluster: its Orleans silo is private
/// (localhost clustering whatever <c>Orleans:ClusterMode</c> says) and hosts only its own rate-limit buckets, so its
/// limits count per process. Without <c>ConnectionStrings:Fusion</c> it attaches to the embedded cluster a running
/// service keeps in <c>Database:DataDirectory</c>, and refuses to start if there is none.
/// </remarks>
public sealed class ServiceRoleOptions
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "Service";

    /// <summary>
    /// What this process does: <c>All</c> (ingest, tracks, alerts, history reads, dashboard) or <c>HistoryReads</c>
    /// (only the history and audit reads and the operations endpoints, from the store; see docs/limits-and-keys.md).
    /// Default All.
    /// </summary>
    public ServiceRole Role { get; set; } = ServiceRole.All;

    /// <summary>
    /// Reads section <c>Service</c> from <paramref name="configuration"/>; an unknown role stops the start with a message
    /// that names the key.
    /// </summary>
    public static ServiceRoleOptions From(IConfiguration configuration)
    {
        ArgumentNullException.ThrowIfNull(configuration);
        string? text = configuration[Section + ":" + nameof(Role)];
        if (string.IsNullOrWhiteSpace(text))
        {
            return new ServiceRoleOptions();
        }

        if (!Enum.TryParse(text.Trim(), ignoreCase: true, out ServiceRole role) || !Enum.IsDefined(role) || int.TryParse(text, out _))
        {
            throw new InvalidOperationException(
                $"Service:Role is '{text}': it must be one of {string.Join(", ", Enum.GetNames<ServiceRole>())}.");
        }

        return new ServiceRoleOptions { Role = role };
    }
}
