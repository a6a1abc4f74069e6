// Which of the ingest lock buckets a vehicle belongs to.
using System.Text;

namespace FusionService.Storage.Measurements;

/// <summary>
/// Vehicles fall into <see cref="Count"/> buckets by a hash of fleet and vehicle id that every process of a cluster
/// computes alike (FNV-1a, 64 bits: Fowler, Noll and Vo, "The FNV Non-Cryptographic Hash Algorithm", IETF draft
/// draft-eastlake-fnv; offset basis 14695981039346656037, prime 1099511628211). Ingest holds a transaction-scoped
/// advisory lock on the bucket of every vehicle it stores (<see cref="MeasurementIngest"/>), and a process's commit
/// writers each own a share of the buckets, so two of its commits never wait for each other's locks.
/// </summary>
public static class IngestBuckets
{
    /// <summary>Number of buckets: a batch over thousands of vans takes at most this many advisory locks.</summary>
    public const int Count = 128;

    private const ulong OffsetBasis = 14695981039346656037UL;
    private const ulong Prime = 1099511628211UL;

    /// <summary>The bucket, 0 to <see cref="Count"/> - 1, of a vehicle: FNV-1a over the fleet id's 16 bytes (RFC 4122 order) and the vehicle id in UTF-8.</summary>
    public static int Of(Guid fleetId, string vehicleId)
    {
        ArgumentNullException.ThrowIfNull(vehicleId);
        Span<byte> fleet = stackalloc byte[16];
        fleetId.TryWriteBytes(fleet, bigEndian: true, out _);
        ulong hash = Mix(OffsetBasis, fleet);
        int length = Encoding.UTF8.GetMaxByteCount(vehicleId.Length);
        Span<byte> vehicle = length <= 256 ? stackalloc byte[length] : new byte[length];
        hash = Mix(hash, vehicle[..Encoding.UTF8.GetBytes(vehicleId, vehicle)]);
        return (int)(hash % Count);
    }

    /// <summary>FNV-1a over <paramref name="bytes"/>, continuing from <paramref name="hash"/>.</summary>
    public static ulong Mix(ulong hash, ReadOnlySpan<byte> bytes)
    {
        foreach (byte b in bytes)
        {
            hash = (hash ^ b) * Prime;
        }

        return hash;
    }
}
