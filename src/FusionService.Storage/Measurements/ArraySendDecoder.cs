// Decodes PostgreSQL's binary array format (array_send) of one-dimensional arrays of fixed-width numbers.
using System.Buffers.Binary;

namespace FusionService.Storage.Measurements;

/// <summary>
/// Reads the binary form PostgreSQL's <c>array_send</c> gives a one-dimensional array (PostgreSQL 15 source,
/// <c>src/backend/utils/adt/arrayfuncs.c</c>, <c>array_send</c>: big-endian int32 number of dimensions, int32 flags (1 when
/// the array holds nulls), element type oid, then per dimension int32 length and int32 lower bound, then per element an
/// int32 byte length, -1 for null, followed by the element's own send form). The chunk reads ask for their arrays this
/// way and decode them here in one pass, which costs far less per element than a general array reader.
/// </summary>
internal static class ArraySendDecoder
{
    /// <summary>Number of elements of the array in <paramref name="data"/> (0 for an empty array).</summary>
    /// <exception cref="FormatException">Not a one-dimensional array.</exception>
    public static int Count(ReadOnlySpan<byte> data)
    {
        int dimensions = BinaryPrimitives.ReadInt32BigEndian(data);
        return dimensions switch
        {
            0 => 0,
            1 => BinaryPrimitives.ReadInt32BigEndian(data[12..]),
            _ => throw new FormatException("a chunk array must have one dimension, this one has " + dimensions),
        };
    }

    /// <summary>Decodes a <c>bigint[]</c> without nulls into <paramref name="target"/>.</summary>
    public static void Int64(ReadOnlySpan<byte> data, Span<long> target)
    {
        var elements = Elements(data, target.Length);
        for (int i = 0; i < target.Length; i++)
        {
            target[i] = BinaryPrimitives.ReadInt64BigEndian(Element(ref elements, 8));
        }
    }

    /// <summary>Decodes a <c>smallint[]</c> without nulls into <paramref name="target"/>.</summary>
    public static void Int16(ReadOnlySpan<byte> data, Span<short> target)
    {
        var elements = Elements(data, target.Length);
        for (int i = 0; i < target.Length; i++)
        {
            target[i] = BinaryPrimitives.ReadInt16BigEndian(Element(ref elements, 2));
        }
    }

    /// <summary>Decodes a <c>double precision[]</c> without nulls into <paramref name="target"/>.</summary>
    public static void Float64(ReadOnlySpan<byte> data, Span<double> target)
    {
        var elements = Elements(data, target.Length);
        for (int i = 0; i < target.Length; i++)
        {
            target[i] = BinaryPrimitives.ReadDoubleBigEndian(Element(ref elements, 8));
        }
    }

    /// <summary>Decodes a <c>double precision[]</c> that may hold nulls into <paramref name="target"/>.</summary>
    public static void NullableFloat64(ReadOnlySpan<byte> data, Span<double?> target)
    {
        var elements = Elements(data, target.Length);
        for (int i = 0; i < target.Length; i++)
        {
            int length = BinaryPrimitives.ReadInt32BigEndian(elements);
            if (length < 0)
            {
                target[i] = null;
                elements = elements[4..];
                continue;
            }

            target[i] = BinaryPrimitives.ReadDoubleBigEndian(Element(ref elements, 8));
        }
    }

    /// <summary>Decodes an <c>integer[]</c> without nulls into <paramref name="target"/>.</summary>
    public static void Int32(ReadOnlySpan<byte> data, Span<int> target)
    {
        var elements = Elements(data, target.Length);
        for (int i = 0; i < target.Length; i++)
        {
            target[i] = BinaryPrimitives.ReadInt32BigEndian(Element(ref elements, 4));
        }
    }

    /// <summary>Decodes a <c>boolean[]</c> without nulls into <paramref name="target"/>.</summary>
    public static void Boolean(ReadOnlySpan<byte> data, Span<bool> target)
    {
        var elements = Elements(data, target.Length);
        for (int i = 0; i < target.Length; i++)
        {
            target[i] = Element(ref elements, 1)[0] != 0;
        }
    }

    /// <summary>Decodes a <c>real[]</c> that may hold nulls into <paramref name="target"/>.</summary>
    public static void NullableFloat32(ReadOnlySpan<byte> data, Span<float?> target)
    {
        var elements = Elements(data, target.Length);
        for (int i = 0; i < target.Length; i++)
        {
            int length = BinaryPrimitives.ReadInt32BigEndian(elements);
            if (length < 0)
            {
                target[i] = null;
                elements = elements[4..];
                continue;
            }

            target[i] = BinaryPrimitives.ReadSingleBigEndian(Element(ref elements, 4));
        }
    }

    // The element part of a one-dimensional array of `count` elements.
    private static ReadOnlySpan<byte> Elements(ReadOnlySpan<byte> data, int count)
    {
        int actual = Count(data);
        if (actual != count)
        {
            throw new FormatException("the chunk array holds " + actual + " elements, expected " + count);
        }

        return actual == 0 ? [] : data[20..];
    }

    private static ReadOnlySpan<byte> Element(ref ReadOnlySpan<byte> elements, int width)
    {
        int length = BinaryPrimitives.ReadInt32BigEndian(elements);
        if (length != width)
        {
            throw new FormatException("a chunk array element of " + length + " bytes where " + width + " were expected (a null where none may be?)");
        }

        var value = elements.Slice(4, width);
        elements = elements[(4 + width)..];
        return value;
    }
}
