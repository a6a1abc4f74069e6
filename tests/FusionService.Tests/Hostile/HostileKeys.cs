// The keys the hostile run sends, as Authorization header values.
namespace FusionService.Tests.Hostile;

/// <summary>Keys of the run's fleet and of another fleet.</summary>
internal sealed record HostileKeys(string IngestSecret, string ReadSecret, string OtherFleetIngestSecret, string AdminSecret)
{
    public string Admin => "Bearer " + AdminSecret;

    public string Ingest => "Bearer " + IngestSecret;

    public string Read => "Bearer " + ReadSecret;

    public string OtherFleetIngest => "Bearer " + OtherFleetIngestSecret;
}
