// Decodes the replay read's rows straight from PostgreSQL's binary COPY format.
using System.Buffers.Binary;

namespace FusionService.Storage.History;

/// <summary>
/// Reads the rows of <c>COPY (SELECT kind, time_us, message_key, v0, v1, v2 ...) TO STDOUT (FORMAT BINARY)</c> from the
/// raw stream: an 11-byte signature, a 32-bit flags field and a header extension, then per row a 16-bit field count and
/// each field as a 32-bit length (-1 for NULL) followed by its bytes in network order, and -1 as the trailer
/// (PostgreSQL 15 documentation, COPY, "Binary Format"). Decoding here instead of column by column through the
/// exporter saves most of the per-row cost of the whole-day read.
/// </summary>
internal sealed class ReplayCopyDecoder(Stream stream)
{
    private const int FieldCount = 6;

    /// <summary>"PGCOPY", newline, 0xFF, carriage return, newline, zero.</summary>
    private static ReadOnlySpan<byte> Signature => [0x50, 0x47, 0x43, 0x4F, 0x50, 0x59, 0x0A, 0xFF, 0x0D, 0x0A, 0x00];

    private readonly byte[] _buffer = new byte[1 << 16];
    private int _start;
    private int _end;

    /// <summary>Hands each row to <paramref name="onRow"/> in order and returns how many there were.</summary>
    /// <exception cref="InvalidDataException">The stream is not a binary COPY of the expected six columns, or it ends early.</exception>
    public async Task<int> DecodeAsync(Action<ReplayMeasurementValues> onRow, CancellationToken cancellationToken)
    {
        int headerLength;
        while (!TryReadHeader(_buffer.AsSpan(_start, _end - _start), out headerLength))
        {
            await FillAsync(cancellationToken).ConfigureAwait(false);
        }

        _start += headerLength;
        int count = 0;
        while (true)
        {
            int consumed;
            ReplayMeasurementValues row;
            while (!TryReadRow(_buffer.AsSpan(_start, _end - _start), out row, out consumed))
            {
                await FillAsync(cancellationToken).ConfigureAwait(false);
            }

            _start += consumed;
            if (consumed == sizeof(short))
            {
                return count;
            }

            onRow(row);
            count++;
        }
    }

    /// <summary>Keeps the unread bytes and reads more after them; a stream that ends here ends in the middle of the data.</summary>
    private async Task FillAsync(CancellationToken cancellationToken)
    {
        if (_start > 0)
        {
            _buffer.AsSpan(_start, _end - _start).CopyTo(_buffer);
            _end -= _start;
            _start = 0;
        }

        if (_end == _buffer.Length)
        {
            throw new InvalidDataException("a binary COPY row is longer than the read buffer");
        }

        int read = await stream.ReadAsync(_buffer.AsMemory(_end), cancellationToken).ConfigureAwait(false);
        if (read == 0)
        {
            throw new InvalidDataException("the binary COPY data ended before its trailer");
        }

        _end += read;
    }

    private static bool TryReadHeader(ReadOnlySpan<byte> data, out int length)
    {
        length = 0;
        if (data.Length < Signature.Length + 8)
        {
            return false;
        }

        if (!data[..Signature.Length].SequenceEqual(Signature))
        {
            throw new InvalidDataException("not a binary COPY stream (signature mismatch)");
        }

        int extension = BinaryPrimitives.ReadInt32BigEndian(data[(Signature.Length + 4)..]);
        if (extension < 0)
        {
            throw new InvalidDataException("binary COPY header extension length is negative");
        }

        length = Signature.Length + 8 + extension;
        return data.Length >= length;
    }

    /// <summary>
    /// One row, or the trailer (then <paramref name="consumed"/> is 2); false when <paramref name="data"/> does not hold
    /// all of it yet.
    /// </summary>
    private static bool TryReadRow(ReadOnlySpan<byte> data, out ReplayMeasurementValues row, out int consumed)
    {
        row = default;
        consumed = 0;
        if (data.Length < sizeof(short))
        {
            return false;
        }

        short fields = BinaryPrimitives.ReadInt16BigEndian(data);
        if (fields == -1)
        {
            consumed = sizeof(short);
            return true;
        }

        if (fields != FieldCount)
        {
            throw new InvalidDataException($"binary COPY row has {fields} fields, {FieldCount} expected");
        }

        int at = sizeof(short);
        if (!TryField(data, ref at, out ReadOnlySpan<byte> kind)
            || !TryField(data, ref at, out ReadOnlySpan<byte> time)
            || !TryField(data, ref at, out ReadOnlySpan<byte> key)
            || !TryField(data, ref at, out ReadOnlySpan<byte> v0)
            || !TryField(data, ref at, out ReadOnlySpan<byte> v1)
            || !TryField(data, ref at, out ReadOnlySpan<byte> v2))
        {
            return false;
        }

        row = new ReplayMeasurementValues(
            Int16(kind, "kind"), Int64(time, "time_us"), Int64(key, "message_key"), Float8(v0, "v0") ?? throw Null("v0"), Float8(v1, "v1"), Float8(v2, "v2"));
        consumed = at;
        return true;
    }

    /// <summary>The next field's bytes, empty for a NULL (length word -1); false when they are not all in <paramref name="data"/> yet.</summary>
    private static bool TryField(ReadOnlySpan<byte> data, ref int at, out ReadOnlySpan<byte> value)
    {
        value = default;
        if (data.Length - at < sizeof(int))
        {
            return false;
        }

        int length = BinaryPrimitives.ReadInt32BigEndian(data[at..]);
        if (length == -1)
        {
            at += sizeof(int);
            value = null;
            return true;
        }

        if (length < 0 || data.Length - at - sizeof(int) < length)
        {
            if (length < -1)
            {
                throw new InvalidDataException($"binary COPY field length {length}");
            }

            return false;
        }

        value = data.Slice(at + sizeof(int), length);
        at += sizeof(int) + length;

        // A zero-length non-NULL field cannot occur in these columns; an empty span stands for NULL below.
        if (length == 0)
        {
            throw new InvalidDataException("empty binary COPY field");
        }

        return true;
    }

    private static short Int16(ReadOnlySpan<byte> value, string column) =>
        value.Length == sizeof(short) ? BinaryPrimitives.ReadInt16BigEndian(value) : throw Width(column, value.Length);

    private static long Int64(ReadOnlySpan<byte> value, string column) =>
        value.Length == sizeof(long) ? BinaryPrimitives.ReadInt64BigEndian(value) : throw Width(column, value.Length);

    private static double? Float8(ReadOnlySpan<byte> value, string column) => value.Length switch
    {
        0 => null,
        sizeof(double) => BinaryPrimitives.ReadDoubleBigEndian(value),
        _ => throw Width(column, value.Length),
    };

    private static InvalidDataException Width(string column, int length) =>
        new($"binary COPY column {column} has {length} bytes");

    private static InvalidDataException Null(string column) => new($"binary COPY column {column} is NULL");
}
