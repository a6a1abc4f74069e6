// Encrypts webhook signing secrets at rest with ASP.NET Core Data Protection.
using Microsoft.AspNetCore.DataProtection;

namespace FusionService.Alerts;

/// <summary>
/// Encrypts and decrypts webhook signing secrets (purpose <see cref="Purpose"/>). The key ring is shared by every process
/// of the service (see <see cref="WebhookOptions.KeyRingDirectory"/>), so any of them can sign any subscription's deliveries.
/// </summary>
public sealed class WebhookSecretProtector(IDataProtectionProvider provider)
{
    /// <summary>Data Protection purpose string of webhook secrets.</summary>
    public const string Purpose = "FusionService.Webhooks.Secret.v1";

    private readonly IDataProtector _protector = provider.CreateProtector(Purpose);

    /// <summary>The encrypted form of <paramref name="secret"/> (base64url text).</summary>
    public string Protect(string secret) => _protector.Protect(secret);

    /// <summary>The secret inside <paramref name="protectedSecret"/>.</summary>
    /// <exception cref="System.Security.Cryptography.CryptographicException">The key ring does not hold its key, or the text was altered.</exception>
    public string Unprotect(string protectedSecret) => _protector.Unprotect(protectedSecret);
}
