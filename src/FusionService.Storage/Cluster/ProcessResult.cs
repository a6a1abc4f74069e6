// Outcome of one finished child process.
namespace FusionService.Storage.Cluster;

/// <summary>Exit code and captured output of a finished child process.</summary>
/// <param name="ExitCode">The process exit code (0 means success for the PostgreSQL tools).</param>
/// <param name="StandardOutput">Everything the process wrote to standard output.</param>
/// <param name="StandardError">Everything the process wrote to standard error.</param>
internal readonly record struct ProcessResult(int ExitCode, string StandardOutput, string StandardError)
{
    /// <summary>Standard error, or standard output when standard error is empty, trimmed for messages.</summary>
    public string Diagnostics =>
        (string.IsNullOrWhiteSpace(StandardError) ? StandardOutput : StandardError).Trim();
}
