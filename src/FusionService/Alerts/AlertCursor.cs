// The opaque paging cursor of the alert list.
using System.Buffers.Text;
using System.Globalization;
using System.Text;
using FusionService.Estimation.Time;
using FusionService.Storage.Alerts;

namespace FusionService.Alerts;

/// <summary>Writes and reads <c>next_cursor</c> of <c>GET /v1/alerts</c>: the sort key of a page's last alert, base64url.</summary>
public static class AlertCursor
{
    /// <summary>The cursor for <paramref name="position"/>.</summary>
    public static string Encode(AlertPosition position)
    {
        ArgumentNullException.ThrowIfNull(position);
        long us = UnixMicroseconds.FromDateTimeOffset(position.StartedAt);
        string text = string.Create(CultureInfo.InvariantCulture, $"a1:{position.SeverityRank}:{us}:{position.AlertId:N}");
        return Base64Url.EncodeToString(Encoding.ASCII.GetBytes(text));
    }

    /// <summary>The position in <paramref name="cursor"/>, or null when it is not one this service wrote.</summary>
    public static AlertPosition? Decode(string cursor)
    {
        ArgumentNullException.ThrowIfNull(cursor);
        if (cursor.Length is 0 or > 200 || !Base64Url.IsValid(cursor))
        {
            return null;
        }

        string[] parts = Encoding.ASCII.GetString(Base64Url.DecodeFromChars(cursor)).Split(':');
        return parts.Length == 4 && parts[0] == "a1"
            && int.TryParse(parts[1], NumberStyles.None, CultureInfo.InvariantCulture, out int rank) && rank is >= 0 and <= 3
            && long.TryParse(parts[2], NumberStyles.AllowLeadingSign, CultureInfo.InvariantCulture, out long us)
            && us > -62_135_596_800_000_000 && us < 253_402_300_799_000_000
            && Guid.TryParseExact(parts[3], "N", out var id)
            ? new AlertPosition(rank, UnixMicroseconds.ToDateTimeOffset(us), id)
            : null;
    }
}
