// Locates initdb and pg_ctl of the machine's PostgreSQL installation.
using System.Globalization;

namespace FusionService.Storage.Cluster;

/// <summary>Paths of the PostgreSQL server tools the embedded cluster needs.</summary>
/// <param name="InitDb">Path of <c>initdb</c>.</param>
/// <param name="PgCtl">Path of <c>pg_ctl</c>.</param>
internal sealed record PostgresBinaries(string InitDb, string PgCtl)
{
    /// <summary>The folder Debian's postgresql-15 package installs the server tools into.</summary>
    public const string DebianPostgres15Folder = "/usr/lib/postgresql/15/bin";

    /// <summary>
    /// Finds the tools in <paramref name="configuredFolder"/> when given; otherwise in
    /// <see cref="DebianPostgres15Folder"/>, then on PATH.
    /// </summary>
    /// <exception cref="EmbeddedPostgresException">A tool is missing; the message lists where it looked.</exception>
    public static PostgresBinaries Locate(string? configuredFolder)
    {
        if (configuredFolder is not null)
        {
            var initDb = Path.Combine(configuredFolder, "initdb");
            var pgCtl = Path.Combine(configuredFolder, "pg_ctl");
            var missing = new[] { initDb, pgCtl }.Where(p => !File.Exists(p)).ToArray();
            if (missing.Length > 0)
            {
                throw new EmbeddedPostgresException(string.Create(
                    CultureInfo.InvariantCulture,
                    $"PostgreSQL server binaries not found: {string.Join(", ", missing)} do not exist "
                    + $"(configured BinDirectory '{configuredFolder}')."));
            }

            return new PostgresBinaries(initDb, pgCtl);
        }

        var foundPgCtl = ExecutableLocator.Find("pg_ctl", DebianPostgres15Folder);
        var foundInitDb = ExecutableLocator.Find("initdb", DebianPostgres15Folder);
        if (foundPgCtl is null || foundInitDb is null)
        {
            var names = new[] { (foundInitDb, "initdb"), (foundPgCtl, "pg_ctl") }
                .Where(t => t.Item1 is null)
                .Select(t => t.Item2);
            throw new EmbeddedPostgresException(string.Create(
                CultureInfo.InvariantCulture,
                $"PostgreSQL server binaries not found: {string.Join(" and ", names)} missing from "
                + $"{DebianPostgres15Folder} and from PATH. Install the server (Debian: apt-get install postgresql-15) "
                + $"or set EmbeddedPostgresOptions.BinDirectory."));
        }

        return new PostgresBinaries(foundInitDb, foundPgCtl);
    }
}
