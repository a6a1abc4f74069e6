// Entry point of the load and measuring tools: `load ...` and `alert-latency ...` against a running service.
using Microsoft.Extensions.Configuration;

namespace FusionService.LoadTools;

/// <summary>Dispatches the command line to <see cref="LoadCommand"/> or <see cref="AlertLatencyCommand"/>.</summary>
public static class LoadToolsProgram
{
    /// <summary>Runs one command; Ctrl-C stops it cleanly.</summary>
    /// <returns>The command's exit code, or 2 for an unknown command.</returns>
    public static async Task<int> Main(string[] args)
    {
        using var cancel = new CancellationTokenSource();
        Console.CancelKeyPress += (_, e) =>
        {
            e.Cancel = true;
            cancel.Cancel();
        };

        if (LoadCommand.Matches(args))
        {
            // The COPY comparison reads section Database (and ConnectionStrings:Fusion) like the service does, so that it
            // attaches to the running service's embedded cluster.
            var configuration = new ConfigurationBuilder()
                .SetBasePath(AppContext.BaseDirectory)
                .AddJsonFile("appsettings.json", optional: true)
                .AddEnvironmentVariables()
                .Build();
            return await LoadCommand.RunAsync(args, configuration, Console.Out, Console.Error, cancel.Token).ConfigureAwait(false);
        }

        if (AlertLatencyCommand.Matches(args))
        {
            return await AlertLatencyCommand.RunAsync(args, Console.Out, Console.Error, cancel.Token).ConfigureAwait(false);
        }

        await Console.Error.WriteLineAsync(LoadCommand.Usage + Environment.NewLine + AlertLatencyCommand.Usage).ConfigureAwait(false);
        return 2;
    }
}
