// The history reads' PostgreSQL backends get the lowest autogroup weight, and nothing else is touched (issue 14).
using System.Diagnostics;
using System.Globalization;
using FusionService.Database;

namespace FusionService.Tests.Database;

public sealed class BackendPriorityTests
{
    /// <summary>
    /// The autogroup nice value the kernel reports: <c>/proc/PID/autogroup</c> reads like "/autogroup-25 nice 0"
    /// (sched(7), Linux man-pages, "The autogroup feature"). Read here, not through the code under test.
    /// </summary>
    private static int KernelAutogroupNice(int pid)
    {
        string text = File.ReadAllText($"/proc/{pid.ToString(CultureInfo.InvariantCulture)}/autogroup").Trim();
        return int.Parse(text[(text.LastIndexOf(' ') + 1)..], CultureInfo.InvariantCulture);
    }

    /// <summary>The session id of a process: field 6 of <c>/proc/PID/stat</c> (proc(5)), after the parenthesised name.</summary>
    private static int KernelSessionId(int pid)
    {
        string stat = File.ReadAllText($"/proc/{pid.ToString(CultureInfo.InvariantCulture)}/stat");
        return int.Parse(stat[(stat.LastIndexOf(')') + 2)..].Split(' ')[6 - 3], CultureInfo.InvariantCulture);
    }

    /// <summary>Starts <c>sleep 60</c>, through setsid(1) in a session (and so an autogroup) of its own when asked.</summary>
    private static async Task<Process> StartSleeperAsync(bool ownSession)
    {
        var info = ownSession ? new ProcessStartInfo("setsid") { ArgumentList = { "sleep", "60" } } : new ProcessStartInfo("sleep") { ArgumentList = { "60" } };
        var process = Process.Start(info)!;
        // setsid(1) runs the command in place when the caller does not lead a process group, as a child started here
        // does; wait until it has made its session.
        for (int i = 0; ownSession && i < 100 && KernelSessionId(process.Id) != process.Id; i++)
        {
            await Task.Delay(50);
        }

        return process;
    }

    private static async Task StopAsync(Process process)
    {
        process.Kill();
        await process.WaitForExitAsync();
        process.Dispose();
    }

    [Fact]
    public async Task Issue14_a_child_leading_its_own_session_gets_autogroup_nice_19()
    {
        Assert.True(OperatingSystem.IsLinux(), "the service's deployment target; the check reads /proc");
        var child = await StartSleeperAsync(ownSession: true);
        try
        {
            Assert.Equal(child.Id, KernelSessionId(child.Id));
            Assert.Equal(0, KernelAutogroupNice(child.Id));
            Assert.True(BackendPriority.Lower(child.Id, Environment.ProcessId));
            Assert.Equal(19, KernelAutogroupNice(child.Id));
        }
        finally
        {
            await StopAsync(child);
        }
    }

    /// <summary>
    /// What <c>/proc/PID/autogroup</c> holds for this process, as text: a process of the root task group (one started
    /// by a supervisor without a session of its own, such as PID 1 here) reads an empty file, which has no nice value to
    /// parse (kernel/sched/autogroup.c, <c>proc_sched_autogroup_show_task</c>, from reading the source).
    /// </summary>
    private static string KernelAutogroupText(int pid) =>
        File.ReadAllText($"/proc/{pid.ToString(CultureInfo.InvariantCulture)}/autogroup");

    [Fact]
    public async Task Issue14_a_process_of_another_parent_or_of_the_callers_session_is_left_alone()
    {
        string ownAutogroup = KernelAutogroupText(Environment.ProcessId);
        var leader = await StartSleeperAsync(ownSession: true);
        var member = await StartSleeperAsync(ownSession: false);
        try
        {
            // Not a child of the given "postmaster" (init is never this test's parent).
            Assert.False(BackendPriority.Lower(leader.Id, 1));
            Assert.Equal(0, KernelAutogroupNice(leader.Id));
            // A child, but in the caller's session: its autogroup is the caller's own.
            Assert.NotEqual(member.Id, KernelSessionId(member.Id));
            Assert.False(BackendPriority.Lower(member.Id, Environment.ProcessId));
            Assert.Equal(ownAutogroup, KernelAutogroupText(Environment.ProcessId));
        }
        finally
        {
            await StopAsync(leader);
            await StopAsync(member);
        }
    }
}
