// What a vehicle track reads from and writes to PostgreSQL itself, through the store gate.
using FusionService.Database;
using FusionService.Estimation.Models;
using FusionService.Estimation.Tracking;
using FusionService.Storage.Checkpoints;
using FusionService.Storage.Measurements;
using FusionService.Storage.Vehicles;
using Npgsql;

namespace FusionService.Tracking;

/// <summary>
/// The track grains' own store calls (restore reads, catch-up reads, checkpoints), each through
/// <see cref="TrackStoreGate"/> so that a burst of activations queues instead of draining the connection pool. Verdicts
/// and fused states go through <see cref="TrackWriteQueue"/> instead. One per process.
/// </summary>
internal sealed class TrackStore(FusionDatabase database, TrackStoreGate gate)
{
    /// <summary>The vehicle's newest stored checkpoint, or null.</summary>
    public Task<FilterCheckpointRow?> NewestCheckpointAsync(Guid fleetId, string vehicleId, CancellationToken cancellationToken) =>
        RunAsync(
            () => new FilterCheckpointRepository(database.DataSource).NewestCheckpointBeforeAsync(fleetId, vehicleId, long.MaxValue, cancellationToken),
            cancellationToken);

    /// <summary>
    /// Deletes the vehicle's checkpoints from <paramref name="timeUs"/> on and returns the newest one before it, or null:
    /// the state to restore from when stored measurements from <paramref name="timeUs"/> on were never judged.
    /// </summary>
    public Task<FilterCheckpointRow?> CheckpointBeforeAsync(Guid fleetId, string vehicleId, long timeUs, CancellationToken cancellationToken)
    {
        var checkpoints = new FilterCheckpointRepository(database.DataSource);
        return RunAsync<FilterCheckpointRow?>(
            async () =>
            {
                await checkpoints.DeleteFromAsync(fleetId, vehicleId, timeUs, cancellationToken);
                return await checkpoints.NewestCheckpointBeforeAsync(fleetId, vehicleId, timeUs, cancellationToken);
            },
            cancellationToken);
    }

    /// <summary>The vehicle's stored measurements in [<paramref name="fromUs"/>, <paramref name="toUs"/>) with the snapshot they were read under.</summary>
    public Task<(IReadOnlyList<MeasurementRow> Rows, CommitSnapshot Snapshot)> ReadWithSnapshotAsync(
        Guid fleetId, string vehicleId, long fromUs, long toUs, CancellationToken cancellationToken) =>
        RunAsync(
            () => new MeasurementRepository(database.DataSource).ReadWithSnapshotAsync(fleetId, vehicleId, fromUs, toUs, cancellationToken),
            cancellationToken);

    /// <summary>The vehicle's stored measurements in [<paramref name="fromUs"/>, <paramref name="toUs"/>) that have no verdict yet.</summary>
    public Task<IReadOnlyList<MeasurementRow>> ReadPendingAsync(
        Guid fleetId, string vehicleId, long fromUs, long toUs, CancellationToken cancellationToken) =>
        RunAsync(
            () => new MeasurementRepository(database.DataSource).ReadPendingAsync(fleetId, vehicleId, fromUs, toUs, cancellationToken),
            cancellationToken);

    /// <summary><see cref="ReadPendingAsync"/> with the snapshot it was read under.</summary>
    public Task<(IReadOnlyList<MeasurementRow> Rows, CommitSnapshot Snapshot)> ReadPendingWithSnapshotAsync(
        Guid fleetId, string vehicleId, long fromUs, long toUs) =>
        RunAsync(() => new MeasurementRepository(database.DataSource).ReadPendingWithSnapshotAsync(fleetId, vehicleId, fromUs, toUs));

    /// <summary>
    /// Stores <paramref name="checkpoint"/> and deletes the vehicle's checkpoints after <paramref name="supersededAfterUs"/>
    /// and before it, which it supersedes; and the track's receiver fit when one is given (null: unchanged since the last).
    /// </summary>
    public Task StoreCheckpointAsync(FilterCheckpointRow checkpoint, long supersededAfterUs, GnssErrorVariogram? fit)
    {
        var checkpoints = new FilterCheckpointRepository(database.DataSource);
        return RunAsync(async () =>
        {
            await checkpoints.UpsertAsync(checkpoint);
            await checkpoints.DeleteBetweenAsync(checkpoint.FleetId, checkpoint.VehicleId, supersededAfterUs, checkpoint.TimeUs);
            if (fit is { HasEstimate: true } f)
            {
                // The receiver's fit, for the start of the fleet's next new vehicle (ReceiverFitRepository).
                await new ReceiverFitRepository(database.DataSource).UpsertAsync(
                    checkpoint.FleetId, checkpoint.VehicleId, f.Share, f.TimeConstantS, f.LongCount);
            }

            return true;
        });
    }

    /// <summary>
    /// The pair the vehicle's receiver fit starts from, deciding it if it is not yet (<see cref="ReceiverFitRepository.DecideStartAsync"/>):
    /// <see cref="TrackState.Empty"/> from the configured pair, or a state starting from the fleet's median fit.
    /// </summary>
    public async Task<TrackState> DecideStartAsync(Guid fleetId, string vehicleId, GnssErrorModelOptions model, CancellationToken cancellationToken)
    {
        if (!model.FitPerVehicle)
        {
            return TrackState.Empty;
        }

        var start = await RunAsync(
            () => new ReceiverFitRepository(database.DataSource).DecideStartAsync(
                fleetId, vehicleId, model.FleetStartMinVehicles, GnssErrorVariogram.PriorLongPairs, cancellationToken),
            cancellationToken);
        return start?.TrackStart ?? TrackState.Empty;
    }

    /// <summary>Deletes the vehicle's checkpoints from <paramref name="fromUs"/> on.</summary>
    public Task DeleteCheckpointsFromAsync(Guid fleetId, string vehicleId, long fromUs) =>
        RunAsync(async () =>
        {
            await new FilterCheckpointRepository(database.DataSource).DeleteFromAsync(fleetId, vehicleId, fromUs);
            return true;
        });

    /// <summary>
    /// Runs <paramref name="work"/> through the gate; when it fails on a connection the server closed (after a restart of
    /// PostgreSQL the pool still holds them, and the first call on each fails although the server is back), drops the
    /// pool's idle connections and runs it once more. Every call here is a read or an idempotent write.
    /// </summary>
    private Task<T> RunAsync<T>(Func<Task<T>> work, CancellationToken cancellationToken = default) =>
        gate.RunAsync(
            async () =>
            {
                try
                {
                    return await work().ConfigureAwait(false);
                }
                catch (NpgsqlException ex) when (!cancellationToken.IsCancellationRequested && IsClosedConnection(ex))
                {
                    database.DataSource.Clear();
                    return await work().ConfigureAwait(false);
                }
            },
            cancellationToken);

    private static bool IsClosedConnection(NpgsqlException exception) => exception is not PostgresException pg
        || pg.SqlState.StartsWith("08", StringComparison.Ordinal)
        || pg.SqlState.StartsWith("57P", StringComparison.Ordinal);
}
