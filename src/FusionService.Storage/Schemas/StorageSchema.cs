// Schema names: validation, quoting, and connection strings that select a schema.
using System.Text.RegularExpressions;
using Npgsql;

namespace FusionService.Storage.Schemas;

/// <summary>
/// Helpers for running the store in a named PostgreSQL schema. Every table name in the store's SQL is
/// unqualified, so the schema is chosen by the session's <c>search_path</c>.
/// </summary>
public static partial class StorageSchema
{
    /// <summary>
    /// Throws unless <paramref name="schema"/> is a plain lower-case identifier: a letter or underscore, then
    /// up to 62 letters, digits or underscores (PostgreSQL's 63-byte name limit), and not starting with
    /// <c>pg_</c> (reserved for system schemas).
    /// </summary>
    /// <param name="schema">The schema name to check.</param>
    /// <exception cref="ArgumentException">The name is not a plain identifier.</exception>
    public static void Validate(string schema)
    {
        ArgumentNullException.ThrowIfNull(schema);
        if (!PlainIdentifier().IsMatch(schema) || schema.StartsWith("pg_", StringComparison.Ordinal))
        {
            throw new ArgumentException(
                "Schema name must match [a-z_][a-z0-9_]{0,62} and must not start with 'pg_': '" + schema + "'.",
                nameof(schema));
        }
    }

    /// <summary>
    /// Returns <paramref name="connectionString"/> with its <c>Search Path</c> set to <paramref name="schema"/>,
    /// so every connection opened with it reads and writes the store in that schema.
    /// </summary>
    /// <param name="connectionString">An Npgsql connection string.</param>
    /// <param name="schema">A name accepted by <see cref="Validate"/>.</param>
    /// <returns>The changed connection string.</returns>
    public static string WithSearchPath(string connectionString, string schema)
    {
        Validate(schema);
        return new NpgsqlConnectionStringBuilder(connectionString) { SearchPath = schema }.ConnectionString;
    }

    /// <summary>The schema name as a quoted SQL identifier (after <see cref="Validate"/>).</summary>
    internal static string Quote(string schema)
    {
        Validate(schema);
        return "\"" + schema + "\"";
    }

    [GeneratedRegex("^[a-z_][a-z0-9_]{0,62}$", RegexOptions.CultureInvariant)]
    private static partial Regex PlainIdentifier();
}
