// Finds executables in preferred folders, then on PATH.
namespace FusionService.Storage.Cluster;

/// <summary>Looks up executables the way a shell would, after a list of preferred folders.</summary>
internal static class ExecutableLocator
{
    /// <summary>Returns the first existing file named <paramref name="name"/> in <paramref name="preferredFolders"/>,
    /// then in the folders of the PATH environment variable; null when none exists.</summary>
    public static string? Find(string name, params string[] preferredFolders)
    {
        var path = Environment.GetEnvironmentVariable("PATH") ?? string.Empty;
        var folders = preferredFolders.Concat(path.Split(Path.PathSeparator, StringSplitOptions.RemoveEmptyEntries));
        foreach (var folder in folders)
        {
            var candidate = Path.Combine(folder, name);
            if (File.Exists(candidate))
            {
                return candidate;
            }
        }

        return null;
    }
}
