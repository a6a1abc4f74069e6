// One schema migration: a version name and its SQL text.
using System.Security.Cryptography;
using System.Text;

namespace FusionService.Storage.Migrations;

/// <summary>A schema migration: its version (the file name without extension, e.g. <c>0001_initial</c>) and the
/// SQL it runs. The SHA-256 of the SQL is recorded so a changed, already applied migration is detected.</summary>
/// <param name="Version">Version name; migrations run in ordinal order of this name.</param>
/// <param name="Sql">SQL text, possibly many statements; table names unqualified.</param>
internal sealed record Migration(string Version, string Sql)
{
    /// <summary>SHA-256 of the UTF-8 SQL text (32 bytes).</summary>
    public byte[] Checksum { get; } = SHA256.HashData(Encoding.UTF8.GetBytes(Sql));
}
