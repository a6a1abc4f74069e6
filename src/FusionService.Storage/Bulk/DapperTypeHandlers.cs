// Dapper conversions for the read-only memory types used in row structs.
using System.Data;
using System.Runtime.InteropServices;
using Dapper;

namespace FusionService.Storage.Bulk;

/// <summary>Registers Dapper type handlers so rows can expose <see cref="ReadOnlyMemory{T}"/> for
/// <c>bytea</c> and <c>double precision[]</c> columns.</summary>
internal static class DapperTypeHandlers
{
    private static readonly Lazy<bool> Registration = new(() =>
    {
        SqlMapper.AddTypeHandler(new ReadOnlyMemoryHandler<byte>());
        SqlMapper.AddTypeHandler(new ReadOnlyMemoryHandler<double>());
        return true;
    });

    /// <summary>Registers the handlers once per process (Dapper's handler table is global).</summary>
    public static void EnsureRegistered() => _ = Registration.Value;

    private sealed class ReadOnlyMemoryHandler<T> : SqlMapper.TypeHandler<ReadOnlyMemory<T>>
    {
        public override ReadOnlyMemory<T> Parse(object value) => (T[])value;

        public override void SetValue(IDbDataParameter parameter, ReadOnlyMemory<T> value) =>
            parameter.Value = MemoryMarshal.TryGetArray(value, out var segment)
                && segment.Array is { } array && segment.Offset == 0 && segment.Count == array.Length
                ? array
                : value.ToArray();
    }
}
