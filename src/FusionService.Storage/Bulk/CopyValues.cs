// Small helpers shared by the binary COPY writers.
using NpgsqlTypes;

namespace FusionService.Storage.Bulk;

/// <summary>Helpers for writing optional values in a binary COPY row.</summary>
internal static class CopyValues
{
    /// <summary>Writes <paramref name="value"/> as <c>double precision</c>, or SQL NULL when it has no value.</summary>
    public static Task WriteNullableAsync(Npgsql.NpgsqlBinaryImporter importer, double? value, CancellationToken cancellationToken) =>
        value is double present
            ? importer.WriteAsync(present, NpgsqlDbType.Double, cancellationToken)
            : importer.WriteNullAsync(cancellationToken);

    /// <summary>Writes <paramref name="value"/> as <c>real</c>, or SQL NULL when it has no value.</summary>
    public static Task WriteNullableAsync(Npgsql.NpgsqlBinaryImporter importer, float? value, CancellationToken cancellationToken) =>
        value is float present
            ? importer.WriteAsync(present, NpgsqlDbType.Real, cancellationToken)
            : importer.WriteNullAsync(cancellationToken);
}
