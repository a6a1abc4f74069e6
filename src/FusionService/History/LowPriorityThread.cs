// Runs the processor-bound part of a history read on a thread of its own at the lowest OS scheduling priority.
using System.Collections.Concurrent;
using System.Runtime.InteropServices;

namespace FusionService.History;

/// <summary>
/// Starts work on a dedicated thread (never a thread-pool thread) that first lowers its own OS scheduling priority to
/// the lowest one, so that ingest, the track grains and every other thread of the process at normal priority win the
/// processor whenever they want it, while the work still uses processor time nobody else asks for.
/// </summary>
/// <remarks>
/// On Linux the thread sets its nice value to <see cref="LowestNice"/> with <c>setpriority(PRIO_PROCESS, gettid(), 19)</c>
/// (Linux applies nice per thread; the completely fair scheduler weighs a nice-19 thread 15 against 1,024 for nice 0,
/// kernel table <c>sched_prio_to_weight</c>). .NET's <see cref="Thread.Priority"/> is not applied on Linux (the value is
/// kept, the nice value stays 0: checked with .NET 10.0.12 by reading <c>/proc/thread-self/stat</c>), so it is used on
/// other systems only, where it is honoured (Windows). A thread cannot raise its priority again without privilege, which
/// is why each piece of work gets a new thread that ends with it.
/// </remarks>
internal static class LowPriorityThread
{
    /// <summary>The nice value the threads take on Linux: the lowest priority.</summary>
    internal const int LowestNice = 19;

    private const int PrioProcess = 0;

    private static readonly Lock s_gate = new();

    private static int s_refusalReported;

    private static BlockingCollection<Action>? s_completions;

    /// <summary>
    /// Runs <paramref name="work"/> on a new background thread, at the lowest priority when <paramref name="lowPriority"/>.
    /// The task is canceled when the work throws <see cref="OperationCanceledException"/> after
    /// <paramref name="cancellationToken"/> was canceled, faulted when it throws anything else; it is completed by a
    /// thread of normal priority and its continuations run on the thread pool, never on the low-priority thread. The work
    /// must not start threads or queue work to the thread pool itself (a thread started from a low-priority one would
    /// inherit its priority): the filter's replay and the smoother compute and hand rows over through blocking queues only.
    /// </summary>
    /// <param name="name">Thread name (shown by debuggers and <c>ps -L</c>; Linux keeps 15 characters).</param>
    /// <param name="lowPriority">Whether to lower the thread's priority (false: normal priority, as before).</param>
    /// <param name="work">The work.</param>
    /// <param name="cancellationToken">The token the work observes.</param>
    /// <param name="logger">Told (once per process) when the system refuses the lower priority; the work runs anyway.</param>
    public static Task<T> Run<T>(string name, bool lowPriority, Func<T> work, CancellationToken cancellationToken, ILogger logger)
    {
        var completion = new TaskCompletionSource<T>(TaskCreationOptions.RunContinuationsAsynchronously);
        var completions = Completions();
        var thread = new Thread(() =>
        {
            if (lowPriority && !LowerCurrentThread() && Interlocked.Exchange(ref s_refusalReported, 1) == 0)
            {
                logger.LogWarning(
                    "History reads: the system refused to lower a thread's scheduling priority (error {Error}); their processor work runs at normal priority",
                    Marshal.GetLastPInvokeError());
            }

            // The task is completed by the completer thread, not here: completing it queues its continuations to the
            // thread pool, and a pool thread the pool starts for them on this thread would inherit its nice value.
            try
            {
                T result = work();
                completions.Add(() => completion.SetResult(result), CancellationToken.None);
            }
            catch (OperationCanceledException e) when (cancellationToken.IsCancellationRequested)
            {
                completions.Add(() => completion.SetCanceled(e.CancellationToken), CancellationToken.None);
            }
            catch (Exception e)
            {
                completions.Add(() => completion.SetException(e), CancellationToken.None);
            }
        })
        {
            IsBackground = true,
            Name = name,
        };
        thread.Start();
        return completion.Task;
    }

    /// <summary>
    /// The queue of the process's one completer thread (normal priority), started on first use by the calling thread:
    /// a new thread takes the nice value of the thread that creates it (Linux clone(2)), so no thread may be started
    /// from a low-priority one. The low-priority threads hand it their results through a blocking queue, whose waiter is
    /// woken without the thread pool.
    /// </summary>
    private static BlockingCollection<Action> Completions()
    {
        lock (s_gate)
        {
            if (s_completions is null)
            {
                var queue = new BlockingCollection<Action>();
                var completer = new Thread(() =>
                {
                    foreach (Action complete in queue.GetConsumingEnumerable())
                    {
                        complete();
                    }
                })
                {
                    IsBackground = true,
                    Name = "fusion-complete",
                };
                completer.Start();
                s_completions = queue;
            }

            return s_completions;
        }
    }

    /// <summary>
    /// Lowers the calling thread to the lowest scheduling priority; whether the system took it. Only for threads that do
    /// nothing else afterwards: the priority cannot be raised again.
    /// </summary>
    internal static bool LowerCurrentThread()
    {
        if (OperatingSystem.IsLinux())
        {
            return SetPriority(PrioProcess, GetTid(), LowestNice) == 0;
        }

        Thread.CurrentThread.Priority = ThreadPriority.Lowest;
        return true;
    }

    // DllImport rather than LibraryImport: the generated marshalling needs unsafe code, which the project does not
    // allow, and these signatures (int arguments and result) need no marshalling.
    [DllImport("libc", EntryPoint = "setpriority", SetLastError = true)]
    private static extern int SetPriority(int which, int who, int priority);

    [DllImport("libc", EntryPoint = "gettid")]
    private static extern int GetTid();
}
