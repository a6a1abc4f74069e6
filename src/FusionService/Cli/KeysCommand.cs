// `keys create --fleet NAME --role ingest|read|admin [--label L]`: creates an API key and prints its secret once.
using FusionService.Database;
using FusionService.Storage.Fleets;
using Microsoft.Extensions.Logging.Abstractions;
using Microsoft.Extensions.Options;

namespace FusionService.Cli;

/// <summary>The <c>keys create</c> command: creates the fleet when missing, then an API key, and prints the secret once.</summary>
public static class KeysCommand
{
    /// <summary>Usage text.</summary>
    public const string Usage = "usage: keys create --fleet NAME --role ingest|read|admin [--label LABEL]";

    /// <summary>True when <paramref name="args"/> ask for this command.</summary>
    public static bool Matches(string[] args) => args is ["keys", ..];

    /// <summary>
    /// Runs the command against the configured store: <c>ConnectionStrings:Fusion</c>, else the embedded cluster of a
    /// running service on <c>Database:DataDirectory</c>, else that cluster started for the command and stopped after.
    /// </summary>
    /// <returns>The process exit code.</returns>
    public static async Task<int> RunAsync(string[] args, IConfiguration configuration, TextWriter output, TextWriter error)
    {
        ArgumentNullException.ThrowIfNull(args);
        ArgumentNullException.ThrowIfNull(output);
        ArgumentNullException.ThrowIfNull(error);
        if (args is not ["keys", "create", ..])
        {
            await error.WriteLineAsync(Usage).ConfigureAwait(false);
            return 2;
        }

        if (!TryParse(args[2..], out string fleet, out ApiKeyRole role, out string label, out string problem))
        {
            await error.WriteLineAsync(problem).ConfigureAwait(false);
            return 2;
        }

        var options = new DatabaseOptions();
        configuration.GetSection(DatabaseOptions.Section).Bind(options);
        var database = new FusionDatabase(configuration, Options.Create(options), NullLoggerFactory.Instance);
        await using (database.ConfigureAwait(false))
        {
            await database.StartAsync(attachToRunningEmbedded: true, CancellationToken.None).ConfigureAwait(false);
            var admin = new FleetAdmin(database.DataSource);
            var fleetId = await admin.FindFleetAsync(fleet).ConfigureAwait(false) ?? await admin.CreateFleetAsync(fleet).ConfigureAwait(false);
            var key = await admin.CreateApiKeyAsync(fleetId, role, label).ConfigureAwait(false);
            await output.WriteLineAsync("fleet:  " + fleet + " (" + fleetId.ToString("D", System.Globalization.CultureInfo.InvariantCulture) + ")").ConfigureAwait(false);
            await output.WriteLineAsync("role:   " + Security.ApiKeyFilter.RoleName(role)).ConfigureAwait(false);
            await output.WriteLineAsync("key id: " + key.KeyId.ToString("D", System.Globalization.CultureInfo.InvariantCulture)).ConfigureAwait(false);
            await output.WriteLineAsync("secret (shown only now): " + key.Secret).ConfigureAwait(false);
        }

        return 0;
    }

    private static bool TryParse(string[] args, out string fleet, out ApiKeyRole role, out string label, out string problem)
    {
        fleet = string.Empty;
        role = ApiKeyRole.Read;
        label = string.Empty;
        problem = string.Empty;
        string? roleText = null;
        for (int i = 0; i < args.Length; i++)
        {
            string? value = i + 1 < args.Length ? args[i + 1] : null;
            switch (args[i])
            {
                case "--fleet" when value is not null:
                    fleet = value;
                    i++;
                    break;
                case "--role" when value is not null:
                    roleText = value;
                    i++;
                    break;
                case "--label" when value is not null:
                    label = value;
                    i++;
                    break;
                default:
                    problem = "unknown or incomplete option '" + args[i] + "'; " + Usage;
                    return false;
            }
        }

        if (string.IsNullOrWhiteSpace(fleet))
        {
            problem = "--fleet is required; " + Usage;
            return false;
        }

        switch (roleText)
        {
            case "ingest":
                role = ApiKeyRole.Ingest;
                return true;
            case "read":
                role = ApiKeyRole.Read;
                return true;
            case "admin":
                role = ApiKeyRole.Admin;
                return true;
            default:
                problem = "--role must be ingest, read or admin; " + Usage;
                return false;
        }
    }
}
