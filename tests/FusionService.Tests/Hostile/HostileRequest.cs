// One generated hostile request and what its answer must be.
namespace FusionService.Tests.Hostile;

/// <summary>How a hostile request is sent.</summary>
internal enum HostileTransport
{
    /// <summary>Through HttpClient.</summary>
    Http,

    /// <summary>Hand-written bytes over a socket (<see cref="RawHttp"/>).</summary>
    Raw,
}

/// <summary>
/// A generated request. <see cref="Status"/>: the exact status it must get (null: any status below 500);
/// <see cref="MayDrop"/>: an oversized body, whose connection the server may close before the client has sent it all.
/// </summary>
internal sealed record HostileRequest(string Label, HostileTransport Transport, HttpMethod Method, string Path, string? ContentType, byte[] Body, string? Authorization)
{
    public int? Status { get; init; }

    public bool MayDrop { get; init; }

    /// <summary>For <see cref="HostileTransport.Raw"/>: the whole request head (request line and headers, with the blank line).</summary>
    public string? RawHead { get; init; }

    /// <summary>For <see cref="HostileTransport.Raw"/>: close the sending side after the body.</summary>
    public bool HalfClose { get; init; }

    /// <summary>Checks the answer's body beyond the status (null: none).</summary>
    public Action<string>? CheckBody { get; init; }
}
