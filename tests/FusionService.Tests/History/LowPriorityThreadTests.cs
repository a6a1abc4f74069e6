// The processor work of history reads runs on its own threads at the lowest scheduling priority (issue 14).
using System.Globalization;
using System.Runtime.InteropServices;
using FusionService.History;
using Microsoft.Extensions.Logging.Abstractions;

namespace FusionService.Tests.History;

public sealed class LowPriorityThreadTests
{
    /// <summary>
    /// The nice value the kernel holds for the calling thread: field 19 of <c>/proc/thread-self/stat</c> (proc(5), Linux
    /// man-pages: "(19) nice %ld ... a value in the range 19 (low priority) to -20 (high priority)"), counted after the
    /// parenthesised command name, which may itself hold spaces. Read from the kernel, not from the code under test.
    /// </summary>
    private static int KernelNiceOfCurrentThread()
    {
        string stat = File.ReadAllText("/proc/thread-self/stat");
        string[] fields = stat[(stat.LastIndexOf(')') + 2)..].Split(' ');
        return int.Parse(fields[19 - 3], CultureInfo.InvariantCulture);
    }

    /// <summary>The nice value of the process's main thread: field 19 of <c>/proc/self/stat</c> (proc(5), as above).</summary>
    private static int KernelNiceOfProcess()
    {
        string stat = File.ReadAllText("/proc/self/stat");
        string[] fields = stat[(stat.LastIndexOf(')') + 2)..].Split(' ');
        return int.Parse(fields[19 - 3], CultureInfo.InvariantCulture);
    }

    [DllImport("libc", EntryPoint = "setpriority", SetLastError = true)]
    private static extern int SetPriority(int which, int who, int priority);

    [DllImport("libc", EntryPoint = "gettid")]
    private static extern int GetTid();

    [Fact]
    public async Task Issue14_work_runs_at_nice_19_on_a_thread_of_its_own_and_the_caller_keeps_its_priority()
    {
        Assert.True(OperatingSystem.IsLinux(), "the service's deployment target; the check reads /proc");
        // The caller is a thread of its own: when the tests themselves run at nice 19 (`nice -n 19 ./build.sh test` on a
        // shared machine), it first raises its own priority to nice 0, or nothing could tell the work's priority from it.
        // Raising a priority needs CAP_SYS_NICE (setpriority(2)); the tests run as root.
        var checks = await Task.Factory.StartNew(
            () =>
            {
                if (KernelNiceOfCurrentThread() == 19)
                {
                    Assert.True(
                        SetPriority(0, GetTid(), 0) == 0,
                        "the tests run at nice 19 and cannot raise a thread's priority (needs CAP_SYS_NICE); run them at a nice value below 19");
                }

                int callerNice = KernelNiceOfCurrentThread();
                var seen = LowPriorityThread.Run(
                    "fusion-test",
                    lowPriority: true,
                    () => (Nice: KernelNiceOfCurrentThread(), Thread.CurrentThread.IsThreadPoolThread, Thread.CurrentThread.ManagedThreadId),
                    CancellationToken.None,
                    NullLogger.Instance).GetAwaiter().GetResult();
                return (CallerNice: callerNice, Seen: seen, CallerId: Environment.CurrentManagedThreadId, CallerNiceAfter: KernelNiceOfCurrentThread());
            },
            CancellationToken.None,
            TaskCreationOptions.LongRunning,
            TaskScheduler.Default);

        Assert.NotEqual(19, checks.CallerNice);
        // setpriority(2): 19 is the lowest priority (nice range -20..19).
        Assert.Equal(19, checks.Seen.Nice);
        Assert.False(checks.Seen.IsThreadPoolThread);
        Assert.NotEqual(checks.Seen.ManagedThreadId, checks.CallerId);
        Assert.Equal(checks.CallerNice, checks.CallerNiceAfter);
    }

    [Fact]
    public async Task Issue14_without_low_priority_the_work_keeps_the_process_priority()
    {
        int callerNice = KernelNiceOfCurrentThread();
        int nice = await LowPriorityThread.Run("fusion-test", lowPriority: false, KernelNiceOfCurrentThread, CancellationToken.None, NullLogger.Instance);
        Assert.Equal(callerNice, nice);
    }

    [Fact]
    public async Task Issue14_the_awaiting_code_does_not_continue_on_the_low_priority_thread()
    {
        int workerId = await LowPriorityThread.Run(
            "fusion-test", lowPriority: true, () => Environment.CurrentManagedThreadId, CancellationToken.None, NullLogger.Instance);

        // The task's continuations are queued, not run on the worker that completed it: the code after the await goes on
        // at the awaiting side's normal priority, which the threads that also run ingest keep.
        Assert.NotEqual(workerId, Environment.CurrentManagedThreadId);
        // At the process's own priority, not the worker's 19 (a pool thread started from the worker would inherit 19).
        // When the tests themselves run at nice 19 the two are equal and only the thread check above tells.
        Assert.Equal(KernelNiceOfProcess(), KernelNiceOfCurrentThread());
    }

    [Fact]
    public async Task Issue14_a_failure_faults_the_task_and_a_cancellation_cancels_it()
    {
        var failed = LowPriorityThread.Run<int>(
            "fusion-test", lowPriority: true, () => throw new InvalidOperationException("replay out of order"), CancellationToken.None, NullLogger.Instance);
        var error = await Assert.ThrowsAsync<InvalidOperationException>(() => failed);
        Assert.Equal("replay out of order", error.Message);
        Assert.True(failed.IsFaulted);

        using var cancel = new CancellationTokenSource();
        await cancel.CancelAsync();
        var canceled = LowPriorityThread.Run<int>(
            "fusion-test",
            lowPriority: true,
            () =>
            {
                cancel.Token.ThrowIfCancellationRequested();
                return 1;
            },
            cancel.Token,
            NullLogger.Instance);
        await Assert.ThrowsAnyAsync<OperationCanceledException>(() => canceled);
        Assert.True(canceled.IsCanceled);
    }
}
