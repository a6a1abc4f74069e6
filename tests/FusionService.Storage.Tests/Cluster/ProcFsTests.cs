// Path resolution used to recognise a cluster's server processes.
using FusionService.Storage.Cluster;

namespace FusionService.Storage.Tests.Cluster;

public sealed class ProcFsTests
{
    [Fact]
    public void Real_path_resolves_a_symbolic_link_in_the_middle_of_a_path()
    {
        var root = Path.Combine(Path.GetTempPath(), "fusion-realpath-" + Guid.NewGuid().ToString("N")[..8]);
        var target = Path.Combine(root, "target");
        Directory.CreateDirectory(Path.Combine(target, "data"));
        var link = Path.Combine(root, "link");
        Directory.CreateSymbolicLink(link, "target");
        try
        {
            Assert.Equal(Path.Combine(target, "data"), ProcFs.RealPath(Path.Combine(link, "data")));
            Assert.Equal(Path.Combine(target, "data"), ProcFs.RealPath(Path.Combine(root, "link", "..", "target", "data")));
            Assert.Equal(Path.Combine(target, "absent"), ProcFs.RealPath(Path.Combine(link, "absent")));
        }
        finally
        {
            Directory.Delete(root, recursive: true);
        }
    }

    [Fact]
    public void The_working_directory_of_this_process_is_found()
    {
        Assert.Contains(Environment.ProcessId, ProcFs.ProcessesWorkingIn(Environment.CurrentDirectory));
    }
}
