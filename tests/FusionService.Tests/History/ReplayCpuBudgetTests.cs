// The processor-time cap of the history reads' replays (issue 14, HeavyReads:ReplayCpuCores).
using System.Diagnostics;
using System.Globalization;
using FusionService.History;
using FusionService.Ingest;

namespace FusionService.Tests.History;

public sealed class ReplayCpuBudgetTests
{
    /// <summary>A budget of <paramref name="cores"/> beside ingest that has just committed (the cap applies).</summary>
    private static ReplayCpuBudget Budget(double cores)
    {
        var ingest = new IngestActivity();
        ingest.MarkCommitted();
        return Budget(cores, ingest);
    }

    private static ReplayCpuBudget Budget(double cores, IngestActivity ingest) =>
        new(Microsoft.Extensions.Options.Options.Create(new HeavyReadOptions { ReplayCpuCores = cores }), ingest);

    /// <summary>
    /// Processor seconds the calling thread has used: fields 14 and 15 (utime, stime, in clock ticks) of
    /// <c>/proc/thread-self/stat</c> (proc(5), Linux man-pages), divided by the tick rate the kernel reports them in
    /// (USER_HZ, 100 on Linux x86-64: from memory, the value of <c>getconf CLK_TCK</c> here). Read from the kernel, not
    /// from the code under test, which uses clock_gettime.
    /// </summary>
    private static double KernelCpuSecondsOfCurrentThread()
    {
        string stat = File.ReadAllText("/proc/thread-self/stat");
        string[] fields = stat[(stat.LastIndexOf(')') + 2)..].Split(' ');
        return (long.Parse(fields[14 - 3], CultureInfo.InvariantCulture) + long.Parse(fields[15 - 3], CultureInfo.InvariantCulture)) / 100.0;
    }

    [Fact]
    public void Issue14_the_cap_is_a_quarter_of_the_processors_by_default_and_0_turns_it_off()
    {
        Assert.Equal(Environment.ProcessorCount / 4.0, new HeavyReadOptions().ReplayCpuCores);
        Assert.False(Budget(0).Enabled);
        Assert.True(Budget(0.5).Enabled);
    }

    [Fact]
    public void Issue14_a_debt_is_paid_by_sleeping_it_off_at_the_cap_rate()
    {
        var budget = Budget(0.5);
        var clock = Stopwatch.StartNew();
        // The bucket starts with its burst: that much is free.
        Assert.Equal(0, budget.Take(ReplayCpuBudget.BurstS));
        // 0.1 s more at 0.5 cores is a debt of 0.1 s of processor time, 0.2 s of wall time, less what refilled meanwhile.
        double sleepS = budget.Take(0.1);
        double elapsedS = clock.Elapsed.TotalSeconds;
        Assert.InRange(sleepS, 0.2 - elapsedS - 1e-9, 0.2 + 1e-9);
        // A deep debt is slept off a piece at a time (at most 0.5 s per charge).
        Assert.Equal(0.5, budget.Take(10), 3);
    }

    [Fact]
    public void Issue16_without_ingest_to_protect_a_replay_is_not_held_back()
    {
        var ingest = new IngestActivity();
        var budget = Budget(0.5, ingest);
        // No commit yet: any amount is free, and the bucket stays full.
        Assert.Equal(0, budget.Take(10));
        Assert.Equal(0, budget.Take(ReplayCpuBudget.BurstS));
        // Ingest commits: the cap applies from the full bucket on.
        ingest.MarkCommitted();
        Assert.Equal(0, budget.Take(ReplayCpuBudget.BurstS));
        Assert.True(budget.Take(0.1) > 0.1, "a debt of 0.1 s of processor time at 0.5 cores is slept off");
        Assert.True(ingest.CommittedWithin(ReplayCpuBudget.IngestWindow));
        Assert.False(ingest.CommittedWithin(TimeSpan.Zero - TimeSpan.FromTicks(1)));
    }

    [Fact]
    public async Task Issue14_a_metered_thread_stays_under_its_share_of_a_core()
    {
        Assert.True(OperatingSystem.IsLinux(), "the service's deployment target; the check reads /proc");
        const double cores = 0.25;
        var ingest = new IngestActivity();
        var budget = Budget(cores, ingest);
        var result = await Task.Factory.StartNew(
            () =>
            {
                var meter = budget.StartMeter();
                double cpu0 = KernelCpuSecondsOfCurrentThread();
                var wall = Stopwatch.StartNew();
                double sink = 0;
                while (wall.Elapsed < TimeSpan.FromSeconds(1.5))
                {
                    // Ingest commits throughout (the cap applies), and about 10 ms of work per charge, like a chunk of
                    // replayed rows.
                    ingest.MarkCommitted();
                    var piece = Stopwatch.StartNew();
                    while (piece.ElapsedMilliseconds < 10)
                    {
                        sink += Math.Sqrt(sink + 1);
                    }

                    meter.Charge(CancellationToken.None);
                }

                return (CpuS: KernelCpuSecondsOfCurrentThread() - cpu0, WallS: wall.Elapsed.TotalSeconds, Sink: sink);
            },
            CancellationToken.None,
            TaskCreationOptions.LongRunning,
            TaskScheduler.Default);

        // At most the cap over the wall time, plus the burst, plus one piece of work charged after the last sleep, plus
        // one clock tick of the kernel's count each side: 0.25 * 1.5 + 0.05 + 0.01 + 0.02 = 0.455 s. Uncapped the thread
        // would use up to 1.5 s.
        double bound = (cores * result.WallS) + ReplayCpuBudget.BurstS + 0.01 + 0.02;
        Assert.True(result.CpuS <= bound, $"used {result.CpuS:F3} s of processor time in {result.WallS:F3} s; bound {bound:F3} s");
        Assert.True(result.Sink > 0);
    }
}
