// FusionService host: ingest, vehicle states, track grains, background writers; `keys ...` and `demo` as commands
// (the load and measuring tools are in tests/FusionService.LoadTools).
using System.Text.Json;
using FusionService.Alerts;
using FusionService.Audit;
using FusionService.BaseLayer;
using FusionService.Cli;
using FusionService.Dashboard;
using FusionService.Database;
using FusionService.Demo;
using FusionService.Fleets;
using FusionService.History;
using FusionService.Ingest;
using FusionService.Ingest.Nmea;
using FusionService.Live;
using FusionService.Operations;
using FusionService.Security;
using FusionService.Tracking;
using FusionService.Vehicles;
using Serilog;
using Serilog.Events;

if (KeysCommand.Matches(args))
{
    var configuration = new ConfigurationBuilder()
        .SetBasePath(AppContext.BaseDirectory)
        .AddJsonFile("appsettings.json", optional: true)
        .AddEnvironmentVariables()
        .Build();
    return await KeysCommand.RunAsync(args, configuration, Console.Out, Console.Error).ConfigureAwait(false);
}

bool demo = DemoExtensions.Matches(args);
var builder = WebApplication.CreateBuilder(demo ? args[1..] : args);
if (demo)
{
    builder.Configuration.AddInMemoryCollection([new KeyValuePair<string, string?>("Demo:Enabled", "true")]);
}

// A history-read process (Service:Role=HistoryReads) answers only the reads, from the store the others write.
bool historyOnly = ServiceRoleOptions.From(builder.Configuration).Role == ServiceRole.HistoryReads;
if (historyOnly && demo)
{
    throw new InvalidOperationException("The demo needs a process with Service:Role=All: a history-read process takes no telemetry.");
}

builder.Services.AddSerilog((services, logger) => logger
    .ReadFrom.Configuration(builder.Configuration)
    .MinimumLevel.Override("Polly", LogEventLevel.Warning)
    .MinimumLevel.Override("Orleans", LogEventLevel.Warning)
    .MinimumLevel.Override("Microsoft.AspNetCore", LogEventLevel.Warning)
    .Enrich.FromLogContext()
    // Serilog takes the trace and span id of the current activity into every event (TraceId, SpanId); the console shows them.
    .WriteTo.Console(
        outputTemplate: "[{Timestamp:HH:mm:ss} {Level:u3}] {Message:lj} {TraceId} {SpanId}{NewLine}{Exception}",
        formatProvider: System.Globalization.CultureInfo.InvariantCulture));

// Hosted services start in this order and stop in reverse: store, writers, silo.
builder.Services.AddFusionDatabase(historyOnly);
builder.Services.AddFusionOperations();
builder.AddFusionTelemetry();
builder.Services.AddFusionIngest();
builder.Services.AddFusionAudit();
builder.AddFusionTracking(historyOnly);
builder.Services.AddFusionSecurity();
builder.Services.AddFusionAlerts(runsScansAndDeliveries: !historyOnly);
builder.Services.AddProblemDetails();
builder.Services.AddFusionDemo();
builder.Services.AddFusionHistory();
builder.Services.AddFusionDashboard();

builder.Services.ConfigureHttpJsonOptions(json =>
{
    json.SerializerOptions.PropertyNamingPolicy = JsonNamingPolicy.SnakeCaseLower;
    json.SerializerOptions.DictionaryKeyPolicy = null;
    json.SerializerOptions.DefaultIgnoreCondition = System.Text.Json.Serialization.JsonIgnoreCondition.WhenWritingNull;
});

var app = builder.Build();
app.UseExceptionHandler();
app.UseStatusCodePages();
if (!historyOnly)
{
    app.UseFusionDashboard();
    app.UseWebSockets();
}

app.UseSwaggerUI(ui => ui.SwaggerEndpoint("/openapi/v1.json", "FusionService API v1"));
app.MapOperationsEndpoints();

// In this order in every role, so that the committed OpenAPI document keeps its path order.
if (!historyOnly)
{
    app.MapTelemetryEndpoints();
    app.MapVehicleEndpoints();
    app.MapReceiverEndpoints();
}

app.MapHistoryEndpoints();
app.MapAuditEndpoints();
if (!historyOnly)
{
    app.MapNmeaEndpoints();
    app.MapAlertEndpoints();
    app.MapWebhookEndpoints();
    app.MapLiveEndpoints();
    app.MapBaseLayerEndpoints();
    app.MapFleetEndpoints();
}

await app.RunAsync().ConfigureAwait(false);
return 0;

/// <summary>The service's entry point (public so that tests can host it with <c>WebApplicationFactory</c>).</summary>
public partial class Program;
