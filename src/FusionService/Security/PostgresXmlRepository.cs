// The Data Protection key ring stored in PostgreSQL.
using System.Xml.Linq;
using FusionService.Database;
using Microsoft.AspNetCore.DataProtection.Repositories;
using Npgsql;

namespace FusionService.Security;

/// <summary>
/// An <see cref="IXmlRepository"/> on the table <c>data_protection_keys</c> (migration 0009): every process of the
/// service on one database reads and writes the same key ring, so a secret encrypted by one can be decrypted by all.
/// Keys are written once (the friendly name is unique; a second write of the same name is ignored).
/// </summary>
public sealed class PostgresXmlRepository(FusionDatabase database) : IXmlRepository
{
    /// <inheritdoc />
    public IReadOnlyCollection<XElement> GetAllElements()
    {
        var list = new List<XElement>();
        using var connection = database.DataSource.OpenConnection();
        using var command = new NpgsqlCommand("SELECT xml FROM data_protection_keys ORDER BY created_at, friendly_name", connection);
        using var reader = command.ExecuteReader();
        while (reader.Read())
        {
            list.Add(XElement.Parse(reader.GetString(0)));
        }

        return list;
    }

    /// <inheritdoc />
    public void StoreElement(XElement element, string friendlyName)
    {
        ArgumentNullException.ThrowIfNull(element);
        using var connection = database.DataSource.OpenConnection();
        using var command = new NpgsqlCommand(
            "INSERT INTO data_protection_keys (friendly_name, xml) VALUES ($1, $2) ON CONFLICT (friendly_name) DO NOTHING", connection);
        command.Parameters.Add(new NpgsqlParameter { Value = string.IsNullOrEmpty(friendlyName) ? Guid.NewGuid().ToString("D") : friendlyName });
        command.Parameters.Add(new NpgsqlParameter { Value = element.ToString(SaveOptions.DisableFormatting) });
        command.ExecuteNonQuery();
    }
}
