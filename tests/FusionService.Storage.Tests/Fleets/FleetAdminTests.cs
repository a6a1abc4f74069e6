// Fleets and API keys: secrets shown once, stored as SHA-256, resolved by hash, revocable.
using System.Security.Cryptography;
using System.Text;
using System.Text.RegularExpressions;
using FusionService.Storage.Fleets;
using FusionService.Storage.Tests.Infrastructure;
using Npgsql;

namespace FusionService.Storage.Tests.Fleets;

[Collection(PostgresCollection.Name)]
public sealed class FleetAdminTests(PostgresFixture server)
{
    [Fact]
    public void Secret_hash_is_sha256_of_the_utf8_text()
    {
        // FIPS 180-2, one-block example of SHA-256 (published; the appendix number, B.1, from memory): SHA-256("abc").
        Assert.Equal(
            Convert.FromHexString("ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"),
            FleetAdmin.HashSecret("abc"));
    }

    [Fact]
    public async Task A_created_key_resolves_to_its_fleet_and_role()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var admin = new FleetAdmin(schema.DataSource);
        var fleet = await admin.CreateFleetAsync("North depot");
        var other = await admin.CreateFleetAsync("South depot");

        var ingest = await admin.CreateApiKeyAsync(fleet, ApiKeyRole.Ingest, "gateway 1");
        var read = await admin.CreateApiKeyAsync(fleet, ApiKeyRole.Read, "dashboard");
        var otherAdmin = await admin.CreateApiKeyAsync(other, ApiKeyRole.Admin, "ops");

        Assert.Equal(new ApiKeyIdentity(ingest.KeyId, fleet, ApiKeyRole.Ingest), await admin.ResolveApiKeyAsync(ingest.Secret));
        Assert.Equal(new ApiKeyIdentity(read.KeyId, fleet, ApiKeyRole.Read), await admin.ResolveApiKeyAsync(read.Secret));
        Assert.Equal(new ApiKeyIdentity(otherAdmin.KeyId, other, ApiKeyRole.Admin), await admin.ResolveApiKeyAsync(otherAdmin.Secret));
    }

    [Fact]
    public async Task Secrets_are_fsk_prefixed_base64url_of_32_random_bytes_and_all_different()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var admin = new FleetAdmin(schema.DataSource);
        var fleet = await admin.CreateFleetAsync("format fleet");

        var secrets = new List<string>();
        for (var i = 0; i < 20; i++)
        {
            secrets.Add((await admin.CreateApiKeyAsync(fleet, ApiKeyRole.Read, "k")).Secret);
        }

        // RFC 4648 section 5 (published): the URL-safe alphabet A-Z a-z 0-9 - _; 32 bytes = 256 bits need
        // ceil(256 / 6) = 43 characters without padding (derived).
        Assert.All(secrets, s => Assert.Matches(new Regex("^fsk_[A-Za-z0-9_-]{43}$"), s));
        Assert.All(secrets, s => Assert.Equal(32, Base64UrlDecode(s["fsk_".Length..]).Length));
        Assert.Equal(secrets.Count, secrets.Distinct(StringComparer.Ordinal).Count());
    }

    [Fact]
    public async Task Only_the_hash_of_the_secret_is_stored()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var admin = new FleetAdmin(schema.DataSource);
        var fleet = await admin.CreateFleetAsync("hash fleet");
        var key = await admin.CreateApiKeyAsync(fleet, ApiKeyRole.Ingest, "device 7");

        var storedHash = await schema.ScalarAsync<byte[]>("SELECT key_hash FROM api_keys WHERE key_id = $1", key.KeyId);
        var secretInRow = await schema.ScalarAsync<long>(
            "SELECT count(*) FROM api_keys WHERE strpos(row_to_json(api_keys)::text, $1) > 0 OR strpos(encode(key_hash, 'escape'), $1) > 0",
            key.Secret["fsk_".Length..]);

        Assert.Equal(SHA256.HashData(Encoding.UTF8.GetBytes(key.Secret)), storedHash);
        Assert.Equal(0L, secretInRow);
        Assert.DoesNotContain(key.Secret, key.ToString(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task Revoked_unknown_and_malformed_secrets_do_not_resolve()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var admin = new FleetAdmin(schema.DataSource);
        var fleet = await admin.CreateFleetAsync("revocation fleet");
        var kept = await admin.CreateApiKeyAsync(fleet, ApiKeyRole.Read, "kept");
        var revoked = await admin.CreateApiKeyAsync(fleet, ApiKeyRole.Read, "revoked");

        Assert.True(await admin.RevokeApiKeyAsync(revoked.KeyId));
        Assert.False(await admin.RevokeApiKeyAsync(revoked.KeyId));
        Assert.False(await admin.RevokeApiKeyAsync(Guid.NewGuid()));

        Assert.Null(await admin.ResolveApiKeyAsync(revoked.Secret));
        Assert.NotNull(await admin.ResolveApiKeyAsync(kept.Secret));
        Assert.Null(await admin.ResolveApiKeyAsync(kept.Secret + "x"));
        Assert.Null(await admin.ResolveApiKeyAsync(kept.Secret["fsk_".Length..]));
        Assert.Null(await admin.ResolveApiKeyAsync(""));
        Assert.Equal(1L, await schema.ScalarAsync<long>("SELECT count(*) FROM api_keys WHERE revoked_at IS NOT NULL AND key_id = $1", revoked.KeyId));
    }

    [Fact]
    public async Task Fleet_names_are_unique()
    {
        await using var schema = await server.NewMigratedSchemaAsync();
        var admin = new FleetAdmin(schema.DataSource);
        await admin.CreateFleetAsync("Depot");

        var error = await Assert.ThrowsAsync<PostgresException>(() => admin.CreateFleetAsync("Depot"));

        Assert.Equal(PostgresErrorCodes.UniqueViolation, error.SqlState);
    }

    [Fact]
    public async Task A_key_for_an_unknown_fleet_is_refused()
    {
        await using var schema = await server.NewMigratedSchemaAsync();

        var error = await Assert.ThrowsAsync<PostgresException>(
            () => new FleetAdmin(schema.DataSource).CreateApiKeyAsync(Guid.NewGuid(), ApiKeyRole.Admin, "orphan"));

        Assert.Equal(PostgresErrorCodes.ForeignKeyViolation, error.SqlState);
    }

    private static byte[] Base64UrlDecode(string text) =>
        Convert.FromBase64String(text.Replace('-', '+').Replace('_', '/') + new string('=', (4 - (text.Length % 4)) % 4));
}
