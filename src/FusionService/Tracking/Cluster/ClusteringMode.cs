// How the service's Orleans silo finds the other silos.
namespace FusionService.Tracking.Cluster;

/// <summary>Value of <c>Orleans:ClusterMode</c> (environment variable <c>Orleans__ClusterMode</c>).</summary>
public enum ClusteringMode
{
    /// <summary>One silo on its own (Orleans localhost clustering): the default, for one process per database.</summary>
    Localhost,

    /// <summary>
    /// Every process with the same <c>Orleans:ClusterId</c> on the same PostgreSQL (<c>ConnectionStrings:Fusion</c>)
    /// joins one cluster; the membership lives in the store's tables <c>cluster_versions</c> and <c>cluster_members</c>.
    /// </summary>
    Postgres,
}
