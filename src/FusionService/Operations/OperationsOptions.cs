// Settings of the operations endpoints.
using System.ComponentModel.DataAnnotations;

namespace FusionService.Operations;

/// <summary>Settings of section <c>Operations</c>, checked at start (a bad value names its key).</summary>
public sealed class OperationsOptions : IValidatableObject
{
    /// <summary>Configuration section name.</summary>
    public const string Section = "Operations";

    /// <summary>Shortest scrape token accepted (a shorter one is easily guessed; a common-practice floor, not a standard's).</summary>
    public const int MinimumTokenLength = 8;

    /// <summary>Longest scrape token accepted.</summary>
    public const int MaximumTokenLength = 1024;

    /// <summary>
    /// Bearer token a metrics scraper may send to <c>GET /metrics</c> instead of an admin API key; empty (the default):
    /// only admin keys are accepted. The metrics are service-wide counts with no fleet, vehicle or position in them.
    /// Health endpoints and the API documentation (<c>/swagger</c>, <c>/openapi/v1.json</c>) hold no data and stay open.
    /// When set: 8 to 1024 visible ASCII characters, no spaces (the token is compared with the trimmed text after
    /// <c>Bearer </c> in the Authorization header, so a token with spaces at its ends or other characters could never match).
    /// </summary>
    public string MetricsToken { get; set; } = string.Empty;

    /// <summary>
    /// True leaves <c>GET /metrics</c> open to anyone without a token or key (for a service whose port only an internal
    /// network reaches). Default false.
    /// </summary>
    public bool MetricsAnonymous { get; set; }

    /// <inheritdoc/>
    public IEnumerable<ValidationResult> Validate(ValidationContext validationContext)
    {
        if (MetricsToken is null)
        {
            yield return new ValidationResult(Section + ":MetricsToken must not be null; leave it empty for admin keys only.", [nameof(MetricsToken)]);
            yield break;
        }

        if (MetricsToken.Length > 0
            && (MetricsToken.Length < MinimumTokenLength || MetricsToken.Length > MaximumTokenLength || MetricsToken.Any(c => c is < '!' or > '~')))
        {
            yield return new ValidationResult(
                string.Create(System.Globalization.CultureInfo.InvariantCulture,
                    $"{Section}:MetricsToken must be empty or {MinimumTokenLength} to {MaximumTokenLength} visible ASCII characters without spaces (it has {MetricsToken.Length} characters)."),
                [nameof(MetricsToken)]);
        }
    }
}
