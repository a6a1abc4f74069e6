// Settings of the OpenTelemetry export.
namespace FusionService.Operations;

/// <summary>Settings of section <c>Telemetry</c>: where metrics and traces go besides <c>/metrics</c>.</summary>
public sealed class TelemetryOptions
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "Telemetry";

    /// <summary>
    /// OTLP endpoint of a collector (e.g. <c>http://127.0.0.1:4317</c> for gRPC, <c>http://127.0.0.1:4318</c> for
    /// HTTP); empty (the default): no OTLP export, so no traces leave the process and metrics are only scraped at
    /// <c>/metrics</c>. When set, metrics and traces are both exported there.
    /// </summary>
    public string OtlpEndpoint { get; set; } = string.Empty;

    /// <summary>OTLP transport: <c>grpc</c> (default) or <c>http/protobuf</c> (the exporter appends <c>/v1/traces</c> and <c>/v1/metrics</c>).</summary>
    public string OtlpProtocol { get; set; } = "grpc";

    /// <summary>Seconds between two OTLP metric exports (default 60).</summary>
    public int OtlpMetricsIntervalS { get; set; } = 60;

    /// <summary>
    /// Share of traces recorded when exporting by OTLP, 0-1 (default 1: every trace). A trace whose caller sent a
    /// sampled <c>traceparent</c> is recorded regardless (parent-based sampling).
    /// </summary>
    public double TraceSampleRatio { get; set; } = 1.0;

    /// <summary>The first invalid setting as "field: reason", or null.</summary>
    public string? Validate()
    {
        if (OtlpEndpoint.Length > 0 && !Uri.TryCreate(OtlpEndpoint, UriKind.Absolute, out _))
        {
            return "Telemetry:OtlpEndpoint: not an absolute URI ('" + OtlpEndpoint + "')";
        }

        if (OtlpProtocol is not ("grpc" or "http/protobuf"))
        {
            return "Telemetry:OtlpProtocol: expected grpc or http/protobuf, got '" + OtlpProtocol + "'";
        }

        if (OtlpMetricsIntervalS is < 1 or > 3600)
        {
            return "Telemetry:OtlpMetricsIntervalS: must be 1-3600 seconds";
        }

        return TraceSampleRatio is < 0 or > 1 || double.IsNaN(TraceSampleRatio)
            ? "Telemetry:TraceSampleRatio: must be between 0 and 1"
            : null;
    }
}
