// HMAC-SHA256 signature of a webhook delivery.
using System.Globalization;
using System.Security.Cryptography;
using System.Text;

namespace FusionService.Alerts;

/// <summary>
/// Signs webhook deliveries: <c>Fusion-Webhook-Signature: hmac-sha256=&lt;lower-case hex&gt;</c> of
/// HMAC-SHA256(key = UTF-8 secret, message = UTF-8 "&lt;delivery id&gt;\n&lt;timestamp&gt;\n&lt;body&gt;") (HMAC: RFC 2104 /
/// FIPS 198-1; SHA-256: FIPS 180-4), where the delivery id is the <c>Fusion-Webhook-Id</c> header (lower-case UUID with
/// hyphens), the timestamp the <c>Fusion-Webhook-Timestamp</c> header (Unix seconds of the attempt, decimal) and the body
/// the raw request body. A receiver recomputes it over the headers and raw body, compares in constant time, rejects old
/// timestamps to stop replays, and drops a delivery id it has already processed.
/// </summary>
public static class WebhookSigner
{
    /// <summary>Header carrying the delivery id (the same on every attempt of one delivery).</summary>
    public const string IdHeader = "Fusion-Webhook-Id";

    /// <summary>Header carrying the attempt's Unix time, seconds.</summary>
    public const string TimestampHeader = "Fusion-Webhook-Timestamp";

    /// <summary>Header carrying the signature.</summary>
    public const string SignatureHeader = "Fusion-Webhook-Signature";

    /// <summary>Prefix of the signature value.</summary>
    public const string Scheme = "hmac-sha256=";

    /// <summary>HMAC-SHA256 of <paramref name="message"/> under <paramref name="key"/>.</summary>
    public static byte[] Mac(ReadOnlySpan<byte> key, ReadOnlySpan<byte> message) => HMACSHA256.HashData(key, message);

    /// <summary>The signed string: "&lt;delivery id&gt;\n&lt;timestamp&gt;\n&lt;body&gt;".</summary>
    public static string SignedString(Guid deliveryId, long unixSeconds, string body)
    {
        ArgumentNullException.ThrowIfNull(body);
        return deliveryId.ToString("D") + "\n" + unixSeconds.ToString(CultureInfo.InvariantCulture) + "\n" + body;
    }

    /// <summary>The header value for delivery <paramref name="deliveryId"/> with <paramref name="body"/> sent at <paramref name="unixSeconds"/>.</summary>
    public static string Sign(string secret, Guid deliveryId, long unixSeconds, string body)
    {
        ArgumentNullException.ThrowIfNull(secret);
        var message = Encoding.UTF8.GetBytes(SignedString(deliveryId, unixSeconds, body));
        return Scheme + Convert.ToHexStringLower(Mac(Encoding.UTF8.GetBytes(secret), message));
    }
}
