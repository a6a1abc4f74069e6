// docker-compose.yml cannot be run here (no Docker engine): its structure and its settings are checked instead.
using FusionService.Tracking.Cluster;
using Microsoft.Extensions.Configuration;
using Npgsql;
using YamlDotNet.RepresentationModel;

namespace FusionService.Tests.Deployment;

public sealed class ComposeFileTests
{
    private static readonly string Root = FindRoot();

    [Fact]
    public void Three_replicas_form_one_postgres_cluster_behind_the_proxy()
    {
        var services = Map(Load("docker-compose.yml"), "services");
        var postgres = Map(services, "postgres");
        var service = Map(services, "fusionservice");
        var proxy = Map(services, "proxy");

        Assert.Equal("3", Scalar(Map(service, "deploy"), "replicas"));
        var environment = Map(service, "environment");

        // The replicas' settings are ones the service itself accepts, in cluster mode.
        var configuration = Configuration(environment);
        var orleans = OrleansSiloSettings.From(configuration);
        Assert.Equal(ClusteringMode.Postgres, orleans.Clustering);
        Assert.Contains(orleans.SiloPort.ToString(System.Globalization.CultureInfo.InvariantCulture), Sequence(service, "expose"));
        Assert.Contains("8080", Sequence(service, "expose"));

        // Their connection string names the compose PostgreSQL with its database, user and password.
        var connection = new NpgsqlConnectionStringBuilder(configuration.GetConnectionString("Fusion"));
        var pg = Map(postgres, "environment");
        Assert.Equal("postgres", connection.Host);
        Assert.Equal(Scalar(pg, "POSTGRES_DB"), connection.Database);
        Assert.Equal(Scalar(pg, "POSTGRES_USER"), connection.Username);
        Assert.Equal(Scalar(pg, "POSTGRES_PASSWORD"), connection.Password);
        Assert.Equal("service_healthy", Scalar(Map(Map(service, "depends_on"), "postgres"), "condition"));

        // Only the proxy is published; its configuration file exists and forwards to the replicas' port 8080.
        Assert.False(service.Children.ContainsKey(new YamlScalarNode("ports")), "the replicas must not publish a host port (3 would clash)");
        Assert.Equal(["8080:8080"], Sequence(proxy, "ports"));
        string mount = Sequence(proxy, "volumes").Single();
        string file = mount.Split(':')[0];
        Assert.True(File.Exists(Path.Combine(Root, file)), "the proxy's configuration " + file + " is missing");
        string nginx = File.ReadAllText(Path.Combine(Root, file));
        Assert.Contains("server fusionservice:8080", nginx, StringComparison.Ordinal);
        Assert.Contains("proxy_pass http://fusionservice;", nginx, StringComparison.Ordinal);
        Assert.Equal("deploy/Dockerfile", Scalar(Map(service, "build"), "dockerfile"));
        Assert.True(File.Exists(Path.Combine(Root, "deploy", "Dockerfile")));
    }

    /// <summary>
    /// The history reads go to a process the service itself accepts as a history-read process, on the replicas' store;
    /// the proxy routes exactly the four history paths there (the routes of <c>HistoryEndpoints</c> and
    /// <c>AuditEndpoints</c>).
    /// </summary>
    [Fact]
    public void History_reads_go_to_a_history_read_process_on_the_same_store()
    {
        var services = Map(Load("docker-compose.yml"), "services");
        var history = Map(services, "fusion-history");
        var environment = Map(history, "environment");
        var configuration = Configuration(environment);
        Assert.Equal(FusionService.Operations.ServiceRole.HistoryReads, FusionService.Operations.ServiceRoleOptions.From(configuration).Role);
        Assert.Equal(
            Scalar(Map(Map(services, "fusionservice"), "environment"), "ConnectionStrings__Fusion"),
            configuration.GetConnectionString("Fusion"));
        Assert.Contains("fusion-history", Sequence(Map(services, "proxy"), "depends_on"));

        string nginx = File.ReadAllText(Path.Combine(Root, "deploy", "nginx.conf"));
        Assert.Contains("server fusion-history:8080;", nginx, StringComparison.Ordinal);
        Assert.Contains("proxy_pass http://fusion-history;", nginx, StringComparison.Ordinal);
        var route = System.Text.RegularExpressions.Regex.Match(nginx, @"location ~ (\S+) \{");
        Assert.True(route.Success, "no regular-expression location in deploy/nginx.conf");
        var pattern = new System.Text.RegularExpressions.Regex(route.Groups[1].Value);
        foreach (string path in new[] { "/v1/vehicles/van-07/track", "/v1/vehicles/van-07/distance", "/v1/vehicles/van-07/diagnostics", "/v1/vehicles/van-07/explain" })
        {
            Assert.Matches(pattern, path);
        }

        foreach (string path in new[] { "/v1/vehicles", "/v1/vehicles/van-07", "/v1/telemetry", "/v1/vehicles/van-07/track/x", "/v1/alerts" })
        {
            Assert.DoesNotMatch(pattern, path);
        }
    }

    /// <summary>A compose service's environment as the service reads it (<c>A__B</c> is key <c>A:B</c>).</summary>
    private static IConfiguration Configuration(YamlMappingNode environment) => new ConfigurationBuilder()
        .AddInMemoryCollection(environment.Children.Select(e => new KeyValuePair<string, string?>(
            ((YamlScalarNode)e.Key).Value!.Replace("__", ":", StringComparison.Ordinal), ((YamlScalarNode)e.Value).Value)))
        .Build();

    private static YamlMappingNode Load(string name)
    {
        var stream = new YamlStream();
        using var reader = new StreamReader(Path.Combine(Root, name));
        stream.Load(reader);
        return (YamlMappingNode)Assert.Single(stream.Documents).RootNode;
    }

    private static YamlMappingNode Map(YamlMappingNode node, string key) =>
        Assert.IsType<YamlMappingNode>(node.Children[new YamlScalarNode(key)]);

    private static string Scalar(YamlMappingNode node, string key) =>
        Assert.IsType<YamlScalarNode>(node.Children[new YamlScalarNode(key)]).Value!;

    private static string[] Sequence(YamlMappingNode node, string key) =>
        [.. Assert.IsType<YamlSequenceNode>(node.Children[new YamlScalarNode(key)]).Children.Select(c => ((YamlScalarNode)c).Value!)];

    private static string FindRoot()
    {
        for (var dir = new DirectoryInfo(AppContext.BaseDirectory); dir is not null; dir = dir.Parent)
        {
            if (File.Exists(Path.Combine(dir.FullName, "FusionService.sln")))
            {
                return dir.FullName;
            }
        }

        throw new InvalidOperationException("FusionService.sln not found above " + AppContext.BaseDirectory);
    }
}
