// HMAC-SHA256 signature of a webhook delivery.
using System.Globalization;
using System.Security.Cryptography;
using System.Text;

namespace FusionService.Alerts;

/// <summary>
/// Signs webhook deliveries: <c>Fusion-Webhook-Signature: hmac-sha256=&lt;lower-case hex&gt;</c> of
/// HMAC-SHA256(key = UTF-8 secret, message = UTF-8 "&lt;timestamp&gt;\n&lt;body&gt;") (HMAC: RFC 2104 / FIPS 198-1;
/// SHA-256: FIPS 180-4), with <c>Fusion-Webhook-Timestamp</c> the Unix time in seconds of the attempt. A receiver
/// recomputes it over the raw body, compares in constant time, and rejects old timestamps to stop replays.
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

    /// <summary>The header value for <paramref name="body"/> sent at <paramref name="unixSeconds"/>.</summary>
    public static string Sign(string secret, long unixSeconds, string body)
    {
        ArgumentNullException.ThrowIfNull(secret);
        ArgumentNullException.ThrowIfNull(body);
        var message = Encoding.UTF8.GetBytes(unixSeconds.ToString(CultureInfo.InvariantCulture) + "\n" + body);
        return Scheme + Convert.ToHexStringLower(Mac(Encoding.UTF8.GetBytes(secret), message));
    }
}
