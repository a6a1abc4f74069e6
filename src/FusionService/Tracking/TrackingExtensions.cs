// Registration of the vehicle tracks and the Orleans silo.
using FusionService.Estimation.Tracking;
using FusionService.Database;
using FusionService.Tracking.Cluster;
using Microsoft.Extensions.Options;
using Orleans.Configuration;
using Orleans.Runtime;

namespace FusionService.Tracking;

/// <summary>Registers the shared track processor, the background writer and the in-process Orleans silo.</summary>
public static class TrackingExtensions
{
    /// <summary>
    /// Adds the track processor (default options, delivery-van noise profile with the GNSS error model of section
    /// <c>GnssErrorModel</c>, <see cref="GnssErrorModelOptions"/>), <see cref="TrackWriteQueue"/>, the track
    /// grains' collaborators (<see cref="TrackStore"/>, <see cref="TrackPartsFactory"/>) and an
    /// Orleans silo (section <c>Orleans</c>, see <see cref="OrleansSiloSettings"/>). Clustering is localhost (one silo)
    /// by default; <c>Orleans:ClusterMode=Postgres</c> joins every process with the same <c>Orleans:ClusterId</c> on
    /// the same PostgreSQL into one cluster, its membership kept by <see cref="PostgresMembershipTable"/>. The grain
    /// directory stays Orleans' own in-memory distributed directory (the grains keep no Orleans state, so nothing
    /// else is shared). New activations prefer the silo that calls first: the process a vehicle's messages arrive at
    /// hosts its track unless another already does. A history-read process (<paramref name="historyOnly"/>,
    /// <c>Service:Role=HistoryReads</c>) joins no cluster: its silo is localhost-clustered, private to the process, and
    /// hosts only its rate-limit buckets (it needs its own <c>Orleans:SiloPort</c> beside a service on the same machine).
    /// </summary>
    public static WebApplicationBuilder AddFusionTracking(this WebApplicationBuilder builder, bool historyOnly = false)
    {
        ArgumentNullException.ThrowIfNull(builder);
        builder.Services.AddOptions<TrackGrainOptions>().BindConfiguration(TrackGrainOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        builder.Services.AddOptions<GnssErrorModelOptions>().BindConfiguration(GnssErrorModelOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        builder.Services.AddSingleton(sp => new TrackProcessor(new TrackOptions(), sp.GetRequiredService<IOptions<GnssErrorModelOptions>>().Value.ToProfile()));
        builder.Services.AddSingleton(TimeProvider.System);
        builder.Services.AddSingleton<TrackWriteQueue>();
        builder.Services.AddSingleton<TrackStoreGate>();
        builder.Services.AddSingleton<TrackStore>();
        builder.Services.AddSingleton<TrackPartsFactory>();
        builder.Services.AddSingleton<TrackDispatcher>();
        builder.Services.AddHostedService(sp => sp.GetRequiredService<TrackWriteQueue>());
        var settings = OrleansSiloSettings.From(builder.Configuration);
        var clustering = historyOnly ? ClusteringMode.Localhost : settings.Clustering;
        if (clustering == ClusteringMode.Postgres
            && string.IsNullOrEmpty(builder.Configuration.GetConnectionString(FusionDatabase.ConnectionStringName)))
        {
            throw new InvalidOperationException(
                "Orleans:ClusterMode=Postgres needs ConnectionStrings:Fusion (ConnectionStrings__Fusion): the processes of a "
                + "cluster share one PostgreSQL server, and an embedded one is private to its process.");
        }

        builder.UseOrleans(silo =>
        {
            silo.Services.AddSingleton<PlacementStrategy, PreferLocalPlacement>();

            // Orleans' strongly consistent in-cluster directory: a track is never active in two processes at once, not even
            // while a process stops or dies (the default directory allows brief duplicates then; the fault harness met one:
            // a new activation restored while the stopping process's old one still took hand-overs). Orleans marks the
            // API as for evaluation (ORLEANSEXP003); docs/cluster.md says why we take it.
#pragma warning disable ORLEANSEXP003
            silo.AddDistributedGrainDirectory();
#pragma warning restore ORLEANSEXP003

            // Grain calls carry the caller's trace (W3C trace context in the request context): an ingest request's trace
            // goes on into the vehicle's grain. The filters run on every call; without a listener on the Orleans
            // sources (no OTLP endpoint configured) they start no span.
            silo.AddActivityPropagation();
            if (clustering == ClusteringMode.Localhost)
            {
                silo.UseLocalhostClustering();
                return;
            }

            silo.Configure<ClusterOptions>(cluster =>
            {
                cluster.ClusterId = settings.ClusterId;
                cluster.ServiceId = "fusionservice";
            });
            silo.Configure<ClusterMembershipOptions>(membership =>
            {
                membership.ProbeTimeout = TimeSpan.FromSeconds(settings.ProbeTimeoutS);
                membership.NumMissedProbesLimit = settings.MissedProbesLimit;
            });
            silo.Services.AddSingleton<IMembershipTable, PostgresMembershipTable>();
        });

        // After the silo: hosted services stop in reverse order, so deliveries in flight finish before the silo stops.
        builder.Services.AddHostedService(sp => sp.GetRequiredService<TrackDispatcher>());

        // Ports and address are read when the options are built, so that configuration added after this call (the
        // tests' host factory) still counts.
        builder.Services.AddOptions<EndpointOptions>().PostConfigure<IConfiguration>((endpoints, configuration) =>
        {
            var late = OrleansSiloSettings.From(configuration);
            endpoints.SiloPort = late.SiloPort;
            endpoints.GatewayPort = late.GatewayPort;
            if (!historyOnly && late.Clustering == ClusteringMode.Postgres && late.AdvertisedAddress is not null)
            {
                endpoints.AdvertisedIPAddress = System.Net.IPAddress.Parse(late.AdvertisedAddress);
            }
        });
        builder.Services.AddOptions<DevelopmentClusterMembershipOptions>().PostConfigure<IConfiguration>((membership, configuration) =>
            membership.PrimarySiloEndpoint = new System.Net.IPEndPoint(System.Net.IPAddress.Loopback, OrleansSiloSettings.From(configuration).SiloPort));
        return builder;
    }
}
