// Runs a command to completion with captured output, optionally as the postgres account.
using System.Diagnostics;
using System.Text;

namespace FusionService.Storage.Cluster;

/// <summary>Runs PostgreSQL command-line tools and captures their output.</summary>
internal static class ProcessRunner
{
    /// <summary>Runs <paramref name="command"/> with <paramref name="arguments"/> and waits for it to exit.</summary>
    /// <param name="account">Decides whether the command goes through <c>runuser -u postgres --</c>.</param>
    /// <param name="command">Absolute path of the executable.</param>
    /// <param name="arguments">Arguments, passed without a shell (no quoting needed).</param>
    /// <param name="timeout">Time after which the process is killed and a <see cref="TimeoutException"/> thrown.</param>
    /// <param name="cancellationToken">Kills the process when cancelled.</param>
    public static async Task<ProcessResult> RunAsync(
        ServiceAccount account,
        string command,
        IReadOnlyList<string> arguments,
        TimeSpan timeout,
        CancellationToken cancellationToken)
    {
        var startInfo = new ProcessStartInfo
        {
            RedirectStandardOutput = true,
            RedirectStandardError = true,
            RedirectStandardInput = false,
            UseShellExecute = false,
            // The postgres account may not be able to enter the caller's working directory (e.g. /root).
            WorkingDirectory = "/",
        };
        if (account.SwitchUser)
        {
            startInfo.FileName = account.RunUserPath;
            startInfo.ArgumentList.Add("-u");
            startInfo.ArgumentList.Add(ServiceAccount.PostgresUser);
            startInfo.ArgumentList.Add("--");
            startInfo.ArgumentList.Add(command);
        }
        else
        {
            startInfo.FileName = command;
        }

        foreach (var argument in arguments)
        {
            startInfo.ArgumentList.Add(argument);
        }

        // Messages are parsed by people, not code, but keep them in English and unlocalised.
        startInfo.Environment["LC_MESSAGES"] = "C";

        using var process = new Process { StartInfo = startInfo };
        var stdout = new StringBuilder();
        var stderr = new StringBuilder();
        process.OutputDataReceived += (_, e) => Append(stdout, e.Data);
        process.ErrorDataReceived += (_, e) => Append(stderr, e.Data);
        process.Start();
        process.BeginOutputReadLine();
        process.BeginErrorReadLine();

        using var timeoutSource = CancellationTokenSource.CreateLinkedTokenSource(cancellationToken);
        timeoutSource.CancelAfter(timeout);
        try
        {
            await process.WaitForExitAsync(timeoutSource.Token).ConfigureAwait(false);
        }
        catch (OperationCanceledException)
        {
            process.Kill(entireProcessTree: true);
            if (cancellationToken.IsCancellationRequested)
            {
                throw;
            }

            throw new TimeoutException(string.Create(
                System.Globalization.CultureInfo.InvariantCulture,
                $"'{Path.GetFileName(command)} {string.Join(' ', arguments)}' did not finish within {timeout.TotalSeconds:F0} s."));
        }

        // The parameterless overload waits until the asynchronous output readers have drained.
        process.WaitForExit();
        lock (stdout)
        {
            lock (stderr)
            {
                return new ProcessResult(process.ExitCode, stdout.ToString(), stderr.ToString());
            }
        }
    }

    private static void Append(StringBuilder buffer, string? line)
    {
        if (line is null)
        {
            return;
        }

        lock (buffer)
        {
            buffer.AppendLine(line);
        }
    }
}
