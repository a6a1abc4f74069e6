// Loads the SQL migration files compiled into this assembly.
namespace FusionService.Storage.Migrations;

/// <summary>The migrations embedded as resources from <c>Migrations/Sql/*.sql</c>, in version order.</summary>
internal static class EmbeddedMigrations
{
    private const string Prefix = "FusionService.Storage.Migrations.Sql.";

    /// <summary>Every embedded migration, sorted by version (ordinal comparison of the file names).</summary>
    public static IReadOnlyList<Migration> Load()
    {
        var assembly = typeof(EmbeddedMigrations).Assembly;
        var migrations = new List<Migration>();
        foreach (var name in assembly.GetManifestResourceNames())
        {
            if (!name.StartsWith(Prefix, StringComparison.Ordinal) || !name.EndsWith(".sql", StringComparison.Ordinal))
            {
                continue;
            }

            using var stream = assembly.GetManifestResourceStream(name)
                ?? throw new InvalidOperationException("Embedded migration '" + name + "' cannot be read.");
            using var reader = new StreamReader(stream);
            var version = name[Prefix.Length..^".sql".Length];
            migrations.Add(new Migration(version, reader.ReadToEnd()));
        }

        migrations.Sort((a, b) => string.CompareOrdinal(a.Version, b.Version));
        return migrations;
    }
}
