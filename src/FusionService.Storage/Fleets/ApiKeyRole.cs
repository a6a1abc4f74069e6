// What an API key may do.
namespace FusionService.Storage.Fleets;

/// <summary>The single role of an API key; stored as text in <c>api_keys.role</c>.</summary>
public enum ApiKeyRole
{
    /// <summary>May send measurements (<c>ingest</c>).</summary>
    Ingest,

    /// <summary>May read states, tracks and alerts (<c>read</c>).</summary>
    Read,

    /// <summary>May manage the fleet's keys and vehicles (<c>admin</c>).</summary>
    Admin,
}
