// Lists the garbage-collection pauses recorded in an EventPipe trace (.nettrace) of a .NET process.
using System.Globalization;
using Microsoft.Diagnostics.Tracing;
using Microsoft.Diagnostics.Tracing.Parsers.Clr;

namespace FusionService.Benchmarks;

/// <summary>
/// <c>gc-events FILE.nettrace</c>: one line per pause of the traced process (the runtime's execution engine suspended
/// and restarted), tab-separated: Unix time of the suspension's start in seconds, the generation of the collection
/// started inside it (-1: none, e.g. the second suspension of a background collection), its type (0 blocking outside
/// background, 1 background, 2 foreground during background), milliseconds from the start of the suspension until every
/// managed thread had stopped, and milliseconds from that start until the threads were running again (the whole pause).
/// Record the trace by starting the process with <c>DOTNET_EnableEventPipe=1
/// DOTNET_EventPipeConfig=Microsoft-Windows-DotNETRuntime:0x1:4 DOTNET_EventPipeOutputPath=FILE.nettrace</c> (the GC
/// keyword at informational level; the file is complete when the process has ended).
/// A measuring tool, not a test: it asserts nothing.
/// </summary>
internal static class GcEvents
{
    /// <summary>Reads the trace and prints the pauses.</summary>
    /// <param name="path">The .nettrace file.</param>
    public static void Run(string path)
    {
        using var source = new EventPipeEventSource(path);
        double suspendStart = double.NaN;
        double suspended = double.NaN;
        int generation = -1;
        int type = -1;
        source.Clr.GCSuspendEEStart += e =>
        {
            suspendStart = UnixSeconds(e);
            suspended = double.NaN;
            generation = -1;
            type = -1;
        };
        source.Clr.GCSuspendEEStop += e => suspended = UnixSeconds(e);
        source.Clr.GCStart += (GCStartTraceData e) =>
        {
            generation = e.Depth;
            type = (int)e.Type;
        };
        source.Clr.GCRestartEEStop += e =>
        {
            if (double.IsNaN(suspendStart))
            {
                return;
            }

            double end = UnixSeconds(e);
            Console.WriteLine(string.Create(
                CultureInfo.InvariantCulture,
                $"{suspendStart:F4}\t{generation}\t{type}\t{(suspended - suspendStart) * 1000:F2}\t{(end - suspendStart) * 1000:F2}"));
            suspendStart = double.NaN;
        };
        source.Process();
    }

    private static double UnixSeconds(TraceEvent e) =>
        (e.TimeStamp.ToUniversalTime() - DateTime.UnixEpoch).TotalSeconds;
}
