// Serving the dashboard: static files at "/" (no key; every API call the page makes carries the user's key).
using FusionService.Alerts;
using Microsoft.Extensions.FileProviders;
using Microsoft.Extensions.Options;

namespace FusionService.Dashboard;

/// <summary>Registers and serves the browser dashboard.</summary>
public static class DashboardExtensions
{
    /// <summary>Adds the validated dashboard options.</summary>
    public static IServiceCollection AddFusionDashboard(this IServiceCollection services)
    {
        services.AddOptions<DashboardOptions>().BindConfiguration(DashboardOptions.Section).ValidateDataAnnotations().ValidateOnStart();
        return services;
    }

    /// <summary>The folder the dashboard is served from.</summary>
    public static string StaticFolder(DashboardOptions options) =>
        options.StaticFolder ?? Path.Combine(AppContext.BaseDirectory, "dashboard");

    /// <summary>
    /// Serves the dashboard's static files at "/" (index.html by default) and its settings at <c>/settings.json</c>.
    /// The static files hold no fleet data, so they need no key; the API endpoints stay keyed.
    /// </summary>
    public static WebApplication UseFusionDashboard(this WebApplication app)
    {
        var options = app.Services.GetRequiredService<IOptions<DashboardOptions>>().Value;
        if (!options.Enabled)
        {
            return app;
        }

        string folder = StaticFolder(options);
        if (!Directory.Exists(folder))
        {
            throw new InvalidOperationException("Dashboard: static folder '" + folder + "' does not exist; build the service project "
                + "(it copies the dashboard there) or set Dashboard:Enabled=false");
        }

        string policy = DashboardContentSecurityPolicy.For(options);
        var files = new PhysicalFileProvider(folder);
        app.UseDefaultFiles(new DefaultFilesOptions { FileProvider = files });
        app.UseStaticFiles(new StaticFileOptions
        {
            FileProvider = files,
            OnPrepareResponse = context =>
            {
                var headers = context.Context.Response.Headers;
                headers.CacheControl = "no-cache";
                headers.XContentTypeOptions = "nosniff";
                headers["Referrer-Policy"] = "no-referrer";
                headers.ContentSecurityPolicy = policy;
            },
        });
        app.MapGet("/settings.json", (IOptions<DashboardOptions> current, IOptions<AlertOptions> alerts) => TypedResults.Ok(new DashboardSettingsResponse(
                current.Value.TileUrlTemplate, current.Value.TileAttribution, current.Value.PollIntervalMs, alerts.Value.SilentAfterS)))
            .ExcludeFromDescription();
        return app;
    }
}
