// Registration of the OpenTelemetry metrics and traces and of the /metrics scrape.
using Npgsql;
using OpenTelemetry;
using OpenTelemetry.Exporter;
using OpenTelemetry.Metrics;
using OpenTelemetry.Resources;
using OpenTelemetry.Trace;

namespace FusionService.Operations;

/// <summary>
/// Registers OpenTelemetry: metrics of the service's own meter (<see cref="ServiceMetrics"/>), ASP.NET Core (hosting,
/// routing, Kestrel), Npgsql, Orleans (meter <c>Microsoft.Orleans</c>) and the .NET runtime, served to a Prometheus
/// scraper at <c>/metrics</c> and, with <see cref="TelemetryOptions.OtlpEndpoint"/> set, exported by OTLP together with
/// the traces (the service's spans, ASP.NET Core requests, Orleans grain calls, Npgsql commands, webhook HTTP calls).
/// </summary>
public static class TelemetryExtensions
{
    /// <summary>Meters exported besides the service's own.</summary>
    public static readonly string[] Meters =
    [
        FusionTelemetry.Name,
        "Microsoft.AspNetCore.Hosting",
        "Microsoft.AspNetCore.Server.Kestrel",
        "Microsoft.AspNetCore.Routing",
        "Microsoft.AspNetCore.Diagnostics",
        "Microsoft.AspNetCore.Http.Connections",
        "Microsoft.Orleans",
    ];

    /// <summary>Activity sources traced besides ASP.NET Core's and Npgsql's.</summary>
    public static readonly string[] Sources =
    [
        FusionTelemetry.Name,
        "Microsoft.Orleans.Runtime",
        "Microsoft.Orleans.Application",
        "System.Net.Http",
    ];

    /// <summary>Adds the metrics and, when an OTLP endpoint is configured, the traces.</summary>
    public static WebApplicationBuilder AddFusionTelemetry(this WebApplicationBuilder builder)
    {
        ArgumentNullException.ThrowIfNull(builder);
        var options = builder.Configuration.GetSection(TelemetryOptions.Section).Get<TelemetryOptions>() ?? new TelemetryOptions();
        if (options.Validate() is { } invalid)
        {
            throw new InvalidOperationException(invalid);
        }

        builder.Services.AddOptions<TelemetryOptions>().BindConfiguration(TelemetryOptions.Section);
        bool otlp = options.OtlpEndpoint.Length > 0;
        var telemetry = builder.Services.AddOpenTelemetry()
            .ConfigureResource(resource => resource.AddService(FusionTelemetry.Name, serviceVersion: FusionTelemetry.Version))
            .WithMetrics(metrics =>
            {
                metrics.AddMeter(Meters)
                    .AddRuntimeInstrumentation()
                    .AddNpgsqlInstrumentation()
                    // No cache: two scrapes a moment apart (the load command's before and after) see different counts.
                    .AddPrometheusExporter(prometheus => prometheus.ScrapeResponseCacheDurationMilliseconds = 0);
                if (otlp)
                {
                    metrics.AddOtlpExporter((exporter, reader) =>
                    {
                        Configure(exporter, options, "v1/metrics");
                        reader.PeriodicExportingMetricReaderOptions.ExportIntervalMilliseconds = options.OtlpMetricsIntervalS * 1000;
                    });
                }
            });
        if (otlp)
        {
            telemetry.WithTracing(tracing => tracing
                .SetSampler(new ParentBasedSampler(new TraceIdRatioBasedSampler(options.TraceSampleRatio)))
                .AddSource(Sources)
                .AddAspNetCoreInstrumentation(aspNet => aspNet.Filter = http => !IsQuiet(http.Request.Path))
                .AddNpgsql()
                .AddOtlpExporter(exporter => Configure(exporter, options, "v1/traces")));
        }

        return builder;
    }

    /// <summary>Health probes and scrapes come every few seconds and tell nothing about the service's work: not traced.</summary>
    private static bool IsQuiet(PathString path) =>
        path.StartsWithSegments("/metrics", StringComparison.Ordinal) || path.StartsWithSegments("/health", StringComparison.Ordinal);

    /// <summary>
    /// Points <paramref name="exporter"/> at the configured endpoint. Over HTTP an endpoint set in code is used as it
    /// is, so the signal's path (<paramref name="httpPath"/>) is appended here, as the exporter does for the endpoint
    /// of the environment variable <c>OTEL_EXPORTER_OTLP_ENDPOINT</c>.
    /// </summary>
    private static void Configure(OtlpExporterOptions exporter, TelemetryOptions options, string httpPath)
    {
        if (options.OtlpProtocol == "grpc")
        {
            exporter.Protocol = OtlpExportProtocol.Grpc;
            exporter.Endpoint = new Uri(options.OtlpEndpoint);
        }
        else
        {
            exporter.Protocol = OtlpExportProtocol.HttpProtobuf;
            exporter.Endpoint = new Uri(options.OtlpEndpoint.TrimEnd('/') + "/" + httpPath);
        }
    }
}
