// Log messages of the storage layer, generated at compile time.
using Microsoft.Extensions.Logging;

namespace FusionService.Storage.Logging;

/// <summary>Structured log messages of the storage layer (event ids 4100-4199).</summary>
internal static partial class StorageLog
{
    [LoggerMessage(EventId = 4100, Level = LogLevel.Information,
        Message = "Initialised PostgreSQL cluster in {DataDirectory} in {ElapsedMs} ms")]
    public static partial void ClusterInitialised(ILogger logger, string dataDirectory, long elapsedMs);

    [LoggerMessage(EventId = 4101, Level = LogLevel.Information,
        Message = "Started PostgreSQL on 127.0.0.1:{Port} with data directory {DataDirectory} in {ElapsedMs} ms")]
    public static partial void ClusterStarted(ILogger logger, int port, string dataDirectory, long elapsedMs);

    [LoggerMessage(EventId = 4102, Level = LogLevel.Information,
        Message = "Stopped PostgreSQL with data directory {DataDirectory}")]
    public static partial void ClusterStopped(ILogger logger, string dataDirectory);

    [LoggerMessage(EventId = 4103, Level = LogLevel.Warning,
        Message = "Removed stale postmaster.pid (PID {Pid}, no server running) from {DataDirectory}")]
    public static partial void StalePidFileRemoved(ILogger logger, int pid, string dataDirectory);

    [LoggerMessage(EventId = 4106, Level = LogLevel.Warning,
        Message = "Stopping PostgreSQL (PID {Pid}) left running on {DataDirectory} by process {OwnerPid}, which is gone")]
    public static partial void OrphanedServerStopping(ILogger logger, int pid, string dataDirectory, int ownerPid);

    [LoggerMessage(EventId = 4104, Level = LogLevel.Information, Message = "Created database {Database}")]
    public static partial void DatabaseCreated(ILogger logger, string database);

    [LoggerMessage(EventId = 4105, Level = LogLevel.Warning,
        Message = "Port {Port} was taken when PostgreSQL started; retrying on another port")]
    public static partial void PortTaken(ILogger logger, int port);

    [LoggerMessage(EventId = 4110, Level = LogLevel.Information,
        Message = "Applied migration {Version} to schema {Schema} in {ElapsedMs} ms")]
    public static partial void MigrationApplied(ILogger logger, string version, string schema, long elapsedMs);

    [LoggerMessage(EventId = 4120, Level = LogLevel.Information, Message = "Created partition {Partition}")]
    public static partial void PartitionCreated(ILogger logger, string partition);

    [LoggerMessage(EventId = 4121, Level = LogLevel.Information,
        Message = "Dropped partition {Partition} (older than the retention)")]
    public static partial void PartitionDropped(ILogger logger, string partition);
}
