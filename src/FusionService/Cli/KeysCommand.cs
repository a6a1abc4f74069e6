// `keys create|list|revoke|rotate|quota`: API keys and the vehicle quota of a fleet, from the command line.
using System.Globalization;
using FusionService.Database;
using FusionService.Storage.Fleets;
using Microsoft.Extensions.Logging.Abstractions;
using Microsoft.Extensions.Options;

namespace FusionService.Cli;

/// <summary>
/// The <c>keys</c> commands: <c>create</c> (creates the fleet when missing, then an API key, and prints the secret once),
/// <c>list</c>, <c>revoke</c>, <c>rotate</c> (a new key replacing an old one, optionally after a grace period) and
/// <c>quota</c> (shows or sets the fleet's vehicle quota). A running service applies a revocation within
/// <c>Security:KeyCacheSeconds</c> and closes the key's open streams within <c>Security:StreamKeyRecheckSeconds</c>.
/// </summary>
public static class KeysCommand
{
    /// <summary>Usage text.</summary>
    public const string Usage =
        "usage: keys create --fleet NAME --role ingest|read|admin [--label LABEL] [--expires RFC3339_TIME | --expires-in-days N]\n"
        + "       keys list --fleet NAME\n"
        + "       keys revoke --fleet NAME --id KEY_ID\n"
        + "       keys rotate --fleet NAME --id KEY_ID [--grace-s SECONDS]\n"
        + "       keys quota --fleet NAME [--max N | --default]";

    /// <summary>True when <paramref name="args"/> ask for this command.</summary>
    public static bool Matches(string[] args) => args is ["keys", ..];

    /// <summary>
    /// Runs the command against the configured store: <c>ConnectionStrings:Fusion</c>, else the embedded cluster of a
    /// running service on <c>Database:DataDirectory</c>, else that cluster started for the command and stopped after.
    /// </summary>
    /// <returns>The process exit code: 0 done, 1 not found, 2 bad arguments.</returns>
    public static async Task<int> RunAsync(string[] args, IConfiguration configuration, TextWriter output, TextWriter error)
    {
        ArgumentNullException.ThrowIfNull(args);
        ArgumentNullException.ThrowIfNull(configuration);
        ArgumentNullException.ThrowIfNull(output);
        ArgumentNullException.ThrowIfNull(error);
        if (args is not ["keys", "create" or "list" or "revoke" or "rotate" or "quota", ..])
        {
            await error.WriteLineAsync(Usage).ConfigureAwait(false);
            return 2;
        }

        string verb = args[1];
        if (!TryParse(args[2..], out var values, out string problem) || Validate(verb, values) is { } invalid)
        {
            await error.WriteLineAsync((problem.Length > 0 ? problem : Validate(verb, values!)) + "\n" + Usage).ConfigureAwait(false);
            return 2;
        }

        var options = new DatabaseOptions();
        configuration.GetSection(DatabaseOptions.Section).Bind(options);
        var database = new FusionDatabase(configuration, Options.Create(options), NullLoggerFactory.Instance);
        await using (database.ConfigureAwait(false))
        {
            await database.StartAsync(attachToRunningEmbedded: true, CancellationToken.None).ConfigureAwait(false);
            var admin = new FleetAdmin(database.DataSource);
            string fleet = values["fleet"];
            Guid? found = await admin.FindFleetAsync(fleet).ConfigureAwait(false);
            if (verb == "create")
            {
                var fleetId = found ?? await admin.CreateFleetAsync(fleet).ConfigureAwait(false);
                var key = await admin.CreateApiKeyAsync(fleetId, ParseRole(values["role"])!.Value, values.GetValueOrDefault("label", string.Empty), Expiry(values)).ConfigureAwait(false);
                await output.WriteLineAsync("fleet:  " + fleet + " (" + Id(fleetId) + ")").ConfigureAwait(false);
                await output.WriteLineAsync("role:   " + Security.ApiKeyFilter.RoleName(key.Role)).ConfigureAwait(false);
                await output.WriteLineAsync("key id: " + Id(key.KeyId)).ConfigureAwait(false);
                if (Expiry(values) is { } expires)
                {
                    await output.WriteLineAsync("expires: " + expires.ToString("O", CultureInfo.InvariantCulture)).ConfigureAwait(false);
                }

                await output.WriteLineAsync("secret (shown only now): " + key.Secret).ConfigureAwait(false);
                return 0;
            }

            if (found is not { } id)
            {
                await error.WriteLineAsync("no fleet named '" + fleet + "'").ConfigureAwait(false);
                return 1;
            }

            switch (verb)
            {
                case "list":
                    var now = DateTimeOffset.UtcNow;
                    await output.WriteLineAsync("key id                                role    state    created                   expires                   revoked                   label").ConfigureAwait(false);
                    foreach (var key in await admin.ListApiKeysAsync(id).ConfigureAwait(false))
                    {
                        string state = key.RevokedAt is not null ? "revoked" : key.IsActiveAt(now) ? "active" : "expired";
                        await output.WriteLineAsync(string.Create(CultureInfo.InvariantCulture,
                            $"{Id(key.KeyId)}  {Security.ApiKeyFilter.RoleName(key.Role),-6}  {state,-7}  {Time(key.CreatedAt),-24}  {Time(key.ExpiresAt),-24}  {Time(key.RevokedAt),-24}  {key.Label}")).ConfigureAwait(false);
                    }

                    return 0;
                case "revoke":
                    var revoked = await admin.RevokeApiKeyAsync(id, Guid.Parse(values["id"], CultureInfo.InvariantCulture)).ConfigureAwait(false);
                    if (revoked is null)
                    {
                        await error.WriteLineAsync("no key " + values["id"] + " in fleet '" + fleet + "'").ConfigureAwait(false);
                        return 1;
                    }

                    await output.WriteLineAsync("revoked: " + Id(revoked.KeyId) + " at " + Time(revoked.RevokedAt)).ConfigureAwait(false);
                    return 0;
                case "rotate":
                    int grace = int.Parse(values.GetValueOrDefault("grace-s", "0"), CultureInfo.InvariantCulture);
                    var rotated = await admin.RotateApiKeyAsync(id, Guid.Parse(values["id"], CultureInfo.InvariantCulture), grace).ConfigureAwait(false);
                    if (rotated is not { } fresh)
                    {
                        await error.WriteLineAsync("no active key " + values["id"] + " in fleet '" + fleet + "'").ConfigureAwait(false);
                        return 1;
                    }

                    var old = await admin.GetApiKeyAsync(id, Guid.Parse(values["id"], CultureInfo.InvariantCulture)).ConfigureAwait(false);
                    await output.WriteLineAsync("old key: " + values["id"] + (old!.RevokedAt is { } at ? " revoked at " + Time(at) : " expires at " + Time(old.ExpiresAt))).ConfigureAwait(false);
                    await output.WriteLineAsync("new key id: " + Id(fresh.KeyId)).ConfigureAwait(false);
                    await output.WriteLineAsync("secret (shown only now): " + fresh.Secret).ConfigureAwait(false);
                    return 0;
                default:
                    if (values.ContainsKey("max") || values.ContainsKey("default"))
                    {
                        await admin.SetVehicleQuotaAsync(id, values.TryGetValue("max", out var max) ? int.Parse(max, CultureInfo.InvariantCulture) : null).ConfigureAwait(false);
                    }

                    int? quota = await admin.GetVehicleQuotaAsync(id).ConfigureAwait(false);
                    int vehicles = (await admin.VehicleIdsAsync(id).ConfigureAwait(false)).Count;
                    await output.WriteLineAsync(string.Create(CultureInfo.InvariantCulture,
                        $"vehicle quota: {(quota is { } q ? q.ToString(CultureInfo.InvariantCulture) : "service default (Tenancy:DefaultMaxVehicles)")}; vehicles: {vehicles}")).ConfigureAwait(false);
                    return 0;
            }
        }
    }

    private static string Id(Guid id) => id.ToString("D", CultureInfo.InvariantCulture);

    private static string Time(DateTimeOffset? time) => time is { } t ? t.UtcDateTime.ToString("yyyy-MM-dd'T'HH:mm:ss'Z'", CultureInfo.InvariantCulture) : "-";

    private static DateTimeOffset? Expiry(Dictionary<string, string> values) =>
        values.TryGetValue("expires", out var at) ? DateTimeOffset.Parse(at, CultureInfo.InvariantCulture, DateTimeStyles.AssumeUniversal)
        : values.TryGetValue("expires-in-days", out var days) ? DateTimeOffset.UtcNow.AddDays(double.Parse(days, CultureInfo.InvariantCulture))
        : null;

    private static ApiKeyRole? ParseRole(string? text) => text switch
    {
        "ingest" => ApiKeyRole.Ingest,
        "read" => ApiKeyRole.Read,
        "admin" => ApiKeyRole.Admin,
        _ => null,
    };

    // Which options each verb takes, and their values' form; null when the arguments fit.
    private static string? Validate(string verb, Dictionary<string, string> values)
    {
        string[] allowed = verb switch
        {
            "create" => ["fleet", "role", "label", "expires", "expires-in-days"],
            "list" => ["fleet"],
            "revoke" => ["fleet", "id"],
            "rotate" => ["fleet", "id", "grace-s"],
            _ => ["fleet", "max", "default"],
        };
        if (values.Keys.FirstOrDefault(k => !allowed.Contains(k, StringComparer.Ordinal)) is { } unknown)
        {
            return "keys " + verb + " does not take --" + unknown;
        }

        if (!values.TryGetValue("fleet", out var fleet) || string.IsNullOrWhiteSpace(fleet))
        {
            return "--fleet is required";
        }

        if (verb == "create" && ParseRole(values.GetValueOrDefault("role")) is null)
        {
            return "--role must be ingest, read or admin";
        }

        if (values.TryGetValue("expires", out var at)
            && (!DateTimeOffset.TryParse(at, CultureInfo.InvariantCulture, DateTimeStyles.AssumeUniversal, out var when) || when <= DateTimeOffset.UtcNow))
        {
            return "--expires must be a future time such as 2027-01-31T00:00:00Z";
        }

        if (values.TryGetValue("expires-in-days", out var days)
            && (!double.TryParse(days, NumberStyles.Float, CultureInfo.InvariantCulture, out double d) || !double.IsFinite(d) || d <= 0 || d > 36500))
        {
            return "--expires-in-days must be a positive number of days";
        }

        if (values.ContainsKey("expires") && values.ContainsKey("expires-in-days"))
        {
            return "give --expires or --expires-in-days, not both";
        }

        if (verb is "revoke" or "rotate" && (!values.TryGetValue("id", out var id) || !Guid.TryParse(id, CultureInfo.InvariantCulture, out _)))
        {
            return "--id must be a key id (as keys list shows)";
        }

        if (values.TryGetValue("grace-s", out var grace)
            && (!int.TryParse(grace, NumberStyles.Integer, CultureInfo.InvariantCulture, out int g) || g < 0 || g > 2_592_000))
        {
            return "--grace-s must be a whole number of seconds from 0 to 2592000";
        }

        if (values.TryGetValue("max", out var max)
            && (!int.TryParse(max, NumberStyles.Integer, CultureInfo.InvariantCulture, out int m) || m < 1 || m > 10_000_000))
        {
            return "--max must be a whole number from 1 to 10000000";
        }

        if (values.ContainsKey("max") && values.ContainsKey("default"))
        {
            return "give --max or --default, not both";
        }

        return null;
    }

    // --name value pairs (--default takes no value).
    private static bool TryParse(string[] args, out Dictionary<string, string> values, out string problem)
    {
        values = new Dictionary<string, string>(StringComparer.Ordinal);
        problem = string.Empty;
        for (int i = 0; i < args.Length; i++)
        {
            if (args[i] == "--default")
            {
                values["default"] = "true";
                continue;
            }

            if (!args[i].StartsWith("--", StringComparison.Ordinal) || i + 1 >= args.Length)
            {
                problem = "unknown or incomplete option '" + args[i] + "'";
                return false;
            }

            values[args[i][2..]] = args[i + 1];
            i++;
        }

        return true;
    }
}
