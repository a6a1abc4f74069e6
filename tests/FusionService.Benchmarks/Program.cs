// Benchmark entry point: ./build.sh bench --filter '*' (see docs/benchmarks.md); `memory` prints the per-track memory report.
using BenchmarkDotNet.Running;
using FusionService.Benchmarks;

if (args.Length > 0 && string.Equals(args[0], "memory", StringComparison.Ordinal))
{
    MemoryReport.Run();
    return;
}

if (args.Length > 0 && string.Equals(args[0], "vanday-split", StringComparison.Ordinal))
{
    VanDaySplit.Run(args.Length > 1 ? int.Parse(args[1], System.Globalization.CultureInfo.InvariantCulture) : 3);
    return;
}

if (args.Length > 0 && string.Equals(args[0], "kernel-split", StringComparison.Ordinal))
{
    KernelSplit.Run(args.Length > 1 ? int.Parse(args[1], System.Globalization.CultureInfo.InvariantCulture) : 5);
    return;
}

if (args.Length > 0 && string.Equals(args[0], "history-split", StringComparison.Ordinal))
{
    await HistoryReadSplit.RunAsync(args.Length > 1 ? int.Parse(args[1], System.Globalization.CultureInfo.InvariantCulture) : 3);
    return;
}

if (args.Length > 0 && string.Equals(args[0], "fleet-list", StringComparison.Ordinal))
{
    await FleetListSplit.RunAsync(
        args.Length > 1 ? int.Parse(args[1], System.Globalization.CultureInfo.InvariantCulture) : 12,
        args.Length > 2 ? int.Parse(args[2], System.Globalization.CultureInfo.InvariantCulture) : 20);
    return;
}

if (args.Length > 0 && string.Equals(args[0], "storage-probe", StringComparison.Ordinal))
{
    // storage-probe [repeats] [service]: "service" loads only the service's own layout (a), not the probes b and c.
    await FusionService.Benchmarks.StorageProbe.StorageProbe.RunAsync(
        args.Length > 1 ? int.Parse(args[1], System.Globalization.CultureInfo.InvariantCulture) : 5,
        serviceOnly: args.Length > 2 && string.Equals(args[2], "service", StringComparison.Ordinal));
    return;
}

if (args.Length > 0 && string.Equals(args[0], "state-nees", StringComparison.Ordinal))
{
    StateConsistencyReport.Run(
        args.Length > 1 ? int.Parse(args[1], System.Globalization.CultureInfo.InvariantCulture) : 16,
        args.Length > 2 ? double.Parse(args[2], System.Globalization.CultureInfo.InvariantCulture) : null);
    return;
}

if (args.Length > 0 && string.Equals(args[0], "consistency", StringComparison.Ordinal))
{
    ConsistencyReport.Run(
        args.Length > 1 ? int.Parse(args[1], System.Globalization.CultureInfo.InvariantCulture) : 64,
        onlyFaultyStreams: args.Length > 2 && string.Equals(args[2], "faulty", StringComparison.Ordinal),
        onlyCases: args.Length > 2 && !string.Equals(args[2], "faulty", StringComparison.Ordinal) && args[2].Length > 0 ? args[2] : null,
        mode: args.Length > 3 ? args[3] : null,
        earlierRounds: args.Length > 4 ? int.Parse(args[4], System.Globalization.CultureInfo.InvariantCulture) : ConsistencyReport.LearnedDrives);
    return;
}

if (args.Length > 0 && string.Equals(args[0], "heavy-read-http", StringComparison.Ordinal))
{
    await HeavyReadHttp.RunAsync(args);
    return;
}

if (args.Length > 1 && string.Equals(args[0], "gc-events", StringComparison.Ordinal))
{
    GcEvents.Run(args[1]);
    return;
}

if (args.Length > 0 && string.Equals(args[0], "vanday-http", StringComparison.Ordinal))
{
    await VanDayHttp.RunAsync(args);
    return;
}

BenchmarkSwitcher.FromAssembly(typeof(Program).Assembly).Run(args);
