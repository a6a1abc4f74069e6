// Holds the track writer's verdict writes for one fleet, while ingest of that fleet goes on.
using Npgsql;

namespace FusionService.Tests.Infrastructure;

/// <summary>
/// While held, every verdict write of one fleet waits: a row trigger on <c>measurement_chunks</c> (created once per
/// schema) takes a shared advisory lock keyed by the chunk's fleet before each verdict update, and this hold owns that
/// lock exclusively in an open transaction. New chunks (ingest) are inserts, not updates, so ingest is not held; other
/// fleets' keys are never held, so their writes pass. Disposing releases the writes.
/// </summary>
internal sealed class VerdictWriteHold : IAsyncDisposable
{
    private const string Install = """
        CREATE OR REPLACE FUNCTION test_hold_verdict_writes() RETURNS trigger LANGUAGE plpgsql AS $$
        BEGIN
            PERFORM pg_advisory_xact_lock_shared(hashtextextended('test-verdict-hold/' || OLD.fleet_id::text, 0));
            RETURN NEW;
        END
        $$;
        CREATE OR REPLACE TRIGGER test_hold_verdict_writes BEFORE UPDATE ON measurement_chunks
            FOR EACH ROW EXECUTE FUNCTION test_hold_verdict_writes();
        """;

    private readonly NpgsqlConnection _connection;
    private readonly NpgsqlTransaction _transaction;
    private bool _released;

    private VerdictWriteHold(NpgsqlConnection connection, NpgsqlTransaction transaction)
    {
        _connection = connection;
        _transaction = transaction;
    }

    /// <summary>Holds the verdict writes of <paramref name="fleetId"/> until disposed.</summary>
    public static async Task<VerdictWriteHold> StartAsync(NpgsqlDataSource store, Guid fleetId)
    {
        await using (var install = store.CreateCommand(Install))
        {
            await install.ExecuteNonQueryAsync();
        }

        var connection = await store.OpenConnectionAsync();
        var transaction = await connection.BeginTransactionAsync();
        await using (var hold = new NpgsqlCommand("SELECT pg_advisory_xact_lock(hashtextextended('test-verdict-hold/' || $1::text, 0))", connection, transaction))
        {
            hold.Parameters.Add(new NpgsqlParameter { Value = fleetId });
            await hold.ExecuteNonQueryAsync();
        }

        return new VerdictWriteHold(connection, transaction);
    }

    /// <summary>Releases the held writes.</summary>
    public async ValueTask DisposeAsync()
    {
        if (_released)
        {
            return;
        }

        _released = true;
        await _transaction.CommitAsync();
        await _transaction.DisposeAsync();
        await _connection.DisposeAsync();
    }
}
