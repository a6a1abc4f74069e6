// The committed table of settings (docs/settings.md) against the options classes.
namespace FusionService.Tests.Operations;

public sealed class SettingsTableTests
{
    /// <summary>Set to 1 to rewrite <c>docs/settings.md</c> from the options classes.</summary>
    public const string UpdateVariable = "FUSION_UPDATE_SETTINGS";

    [Fact]
    public async Task Committed_settings_table_is_current()
    {
        string generated = SettingsTable.Render();
        string path = Path.Combine(RepositoryRoot(), "docs", "settings.md");
        if (Environment.GetEnvironmentVariable(UpdateVariable) == "1")
        {
            await File.WriteAllTextAsync(path, generated);
        }

        Assert.True(File.Exists(path), "docs/settings.md is missing; regenerate with " + UpdateVariable + "=1");
        Assert.True(generated == (await File.ReadAllTextAsync(path)).ReplaceLineEndings("\n"),
            "docs/settings.md is stale; regenerate: " + UpdateVariable + "=1 dotnet test tests/FusionService.Tests --filter Committed_settings_table_is_current");
    }

    [Fact]
    public void The_table_lists_the_known_sections_and_their_keys()
    {
        string table = SettingsTable.Render();
        foreach (string section in new[] { "Alerts", "Audit", "Dashboard", "Database", "Demo", "HeavyReads", "Ingest", "Operations", "Orleans", "Security", "Tenancy", "Tracks", "Webhooks" })
        {
            Assert.Contains(SettingsTable.OptionsTypes(), t => SettingsTable.SectionOf(t) == section);
        }

        // Keys as the service reads them, with their defaults and ranges (from IngestOptions and OrleansSiloSettings).
        Assert.Contains("| `Ingest:MaxBodyBytes` | whole number | 4194304 | bytes | 1024 to 268435456 |", table, StringComparison.Ordinal);
        Assert.Contains("| `Orleans:ClusterMode` | one of Localhost, Postgres | Localhost |", table, StringComparison.Ordinal);
        Assert.Contains("| `Tracks:ReplayStretches` | whole number | the number of processors, at most 8 |", table, StringComparison.Ordinal);
        Assert.DoesNotContain("| `Orleans:Clustering` |", table, StringComparison.Ordinal);
    }

    [Fact]
    public void Each_key_of_a_shared_section_belongs_to_one_class()
    {
        // Section Tracks is read by the track grains (TrackGrainOptions) and the history reads (TrackHistoryOptions):
        // a key in both would be one setting with two meanings or two defaults.
        foreach (var group in SettingsTable.OptionsTypes().GroupBy(SettingsTable.SectionOf))
        {
            var owners = new Dictionary<string, Type>(StringComparer.OrdinalIgnoreCase);
            foreach (var type in group)
            {
                foreach (var property in SettingsTable.Settings(type))
                {
                    Assert.True(owners.TryAdd(property.Name, type),
                        $"{group.Key}:{property.Name} is declared by both {owners.GetValueOrDefault(property.Name)?.Name} and {type.Name}");
                }
            }
        }
    }

    private static string RepositoryRoot()
    {
        var folder = new DirectoryInfo(AppContext.BaseDirectory);
        while (folder is not null && !File.Exists(Path.Combine(folder.FullName, "FusionService.sln")))
        {
            folder = folder.Parent;
        }

        return folder?.FullName ?? throw new InvalidOperationException("FusionService.sln not found above " + AppContext.BaseDirectory);
    }
}
