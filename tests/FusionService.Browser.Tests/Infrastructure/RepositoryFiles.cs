// Paths of checked-in files, found from the test assembly's folder.
namespace FusionService.Browser.Tests.Infrastructure;

internal static class RepositoryFiles
{
    /// <summary>The checkout's root (the folder holding FusionService.sln).</summary>
    public static string Root()
    {
        for (var dir = new DirectoryInfo(AppContext.BaseDirectory); dir is not null; dir = dir.Parent)
        {
            if (File.Exists(Path.Combine(dir.FullName, "FusionService.sln")))
            {
                return dir.FullName;
            }
        }

        throw new InvalidOperationException("FusionService.sln not found above " + AppContext.BaseDirectory);
    }

    /// <summary>Folder for screenshots: $FUSION_TEST_ARTIFACTS (build.sh sets it under the test results), else TestResults/browser.</summary>
    public static string Artifacts()
    {
        string folder = Environment.GetEnvironmentVariable("FUSION_TEST_ARTIFACTS") is { Length: > 0 } set
            ? set
            : Path.Combine(AppContext.BaseDirectory, "TestResults", "browser");
        Directory.CreateDirectory(folder);
        return folder;
    }
}
