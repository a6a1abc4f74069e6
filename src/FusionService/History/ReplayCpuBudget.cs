// A processor-time budget shared by the history reads' replay threads (HeavyReads:ReplayCpuCores).
using System.Diagnostics;
using System.Runtime.InteropServices;
using FusionService.Ingest;
using Microsoft.Extensions.Options;

namespace FusionService.History;

/// <summary>
/// Caps the processor time the smoothing replays of all history reads of the process take together at
/// <see cref="HeavyReadOptions.ReplayCpuCores"/> cores: a token bucket of processor seconds, refilled at that many per
/// second and holding at most <see cref="BurstS"/> of them; a replay thread charges the processor time it used after
/// each chunk of rows and sleeps while the bucket is in debt. 0 turns the cap off. The cap applies only while ingest
/// commits (<see cref="IngestActivity"/>, within <see cref="IngestWindow"/>): without ingest there is nothing to yield to,
/// and a capped replay only made a smoothed vehicle-day take twice its processor time on an idle machine.
/// </summary>
/// <remarks>
/// The low priority of the replay threads (<see cref="LowPriorityThread"/>) orders them after ingest inside the process,
/// but on Linux with autogrouping (a scheduling group per session, <c>/proc/sys/kernel/sched_autogroup_enabled</c>) the
/// scheduler shares the processor between groups first: a replay that is always runnable keeps the service's whole group
/// busy, so it takes its full share against every other group (each PostgreSQL backend is one, as it calls
/// <c>setsid</c>), and an ingest thread that wakes up waits for the group's turn. A capped replay leaves the group idle
/// part of the time. Processor time is read with <c>clock_gettime(CLOCK_THREAD_CPUTIME_ID)</c> on Linux; elsewhere the
/// wall time between charges is charged (more than was used when the thread was preempted).
/// </remarks>
internal sealed class ReplayCpuBudget
{
    /// <summary>Most processor seconds the bucket holds (a replay may run this long at full speed after an idle spell).</summary>
    internal const double BurstS = 0.05;

    /// <summary>
    /// The cap applies while ingest committed within this window: with no ingest to protect a replay runs at full speed
    /// (and the bucket stays full).
    /// </summary>
    internal static readonly TimeSpan IngestWindow = TimeSpan.FromSeconds(1);

    /// <summary>Longest sleep of one charge, seconds (a deep debt is worked off over several chunks).</summary>
    private const double MaxSleepS = 0.5;

    private const int ClockThreadCpuTimeId = 3;

    private readonly double _cores;
    private readonly IngestActivity _ingest;
    private readonly Lock _gate = new();
    private double _tokensS;
    private long _refilledAt;

    /// <summary>Creates the budget of <see cref="HeavyReadOptions.ReplayCpuCores"/>, applied while ingest commits.</summary>
    public ReplayCpuBudget(IOptions<HeavyReadOptions> options, IngestActivity ingest)
    {
        ArgumentNullException.ThrowIfNull(options);
        _cores = options.Value.ReplayCpuCores;
        _ingest = ingest;
        _tokensS = BurstS;
        _refilledAt = Stopwatch.GetTimestamp();
    }

    /// <summary>Whether a cap is set.</summary>
    public bool Enabled => _cores > 0;

    /// <summary>A meter of the calling thread's processor time, to charge with; call on the thread that does the work.</summary>
    public Meter StartMeter() => new(this);

    /// <summary>Takes <paramref name="usedS"/> processor seconds from the bucket; the seconds to sleep to pay a debt.</summary>
    internal double Take(double usedS)
    {
        lock (_gate)
        {
            long now = Stopwatch.GetTimestamp();
            if (!_ingest.CommittedWithin(IngestWindow))
            {
                _tokensS = BurstS;
                _refilledAt = now;
                return 0;
            }

            _tokensS = Math.Min(BurstS, _tokensS + (Stopwatch.GetElapsedTime(_refilledAt, now).TotalSeconds * _cores));
            _refilledAt = now;
            _tokensS -= usedS;
            return _tokensS >= 0 ? 0 : Math.Min(MaxSleepS, -_tokensS / _cores);
        }
    }

    /// <summary>The processor time of the calling thread, seconds; null where it cannot be read.</summary>
    internal static double? ThreadCpuS()
    {
        if (!OperatingSystem.IsLinux() || ClockGetTime(ClockThreadCpuTimeId, out Timespec t) != 0)
        {
            return null;
        }

        return t.Seconds + (t.Nanoseconds * 1e-9);
    }

    // DllImport rather than LibraryImport, as in LowPriorityThread: a blittable struct needs no marshalling.
    [DllImport("libc", EntryPoint = "clock_gettime")]
    private static extern int ClockGetTime(int clock, out Timespec time);

    [StructLayout(LayoutKind.Sequential)]
    private struct Timespec
    {
        public long Seconds;
        public long Nanoseconds;
    }

    /// <summary>Charges one thread's processor time to the budget, a piece at a time.</summary>
    internal sealed class Meter
    {
        private readonly ReplayCpuBudget _budget;
        private double _lastCpuS;
        private long _lastWall;

        internal Meter(ReplayCpuBudget budget)
        {
            _budget = budget;
            _lastCpuS = ThreadCpuS() ?? 0;
            _lastWall = Stopwatch.GetTimestamp();
        }

        /// <summary>Charges what the thread used since the last call and sleeps while the budget is in debt.</summary>
        public void Charge(CancellationToken cancellationToken)
        {
            if (!_budget.Enabled)
            {
                return;
            }

            double used;
            if (ThreadCpuS() is { } cpuS)
            {
                used = cpuS - _lastCpuS;
                _lastCpuS = cpuS;
            }
            else
            {
                used = Stopwatch.GetElapsedTime(_lastWall).TotalSeconds;
            }

            double sleepS = _budget.Take(used);
            if (sleepS > 0)
            {
                cancellationToken.WaitHandle.WaitOne(TimeSpan.FromSeconds(sleepS));
            }

            _lastWall = Stopwatch.GetTimestamp();
        }
    }
}
