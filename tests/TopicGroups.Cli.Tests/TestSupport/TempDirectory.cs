namespace TopicGroups.Cli.Tests.TestSupport;

/// <summary>A fresh directory under the system temp folder, deleted on Dispose.</summary>
internal sealed class TempDirectory : IDisposable
{
    public TempDirectory()
    {
        Path = System.IO.Path.Combine(System.IO.Path.GetTempPath(), "topicgroups-cli-tests-" + Guid.NewGuid().ToString("N"));
        Directory.CreateDirectory(Path);
    }

    public string Path { get; }

    public string File(string name) => System.IO.Path.Combine(Path, name);

    public string WriteText(string name, string contents)
    {
        string path = File(name);
        System.IO.File.WriteAllText(path, contents);
        return path;
    }

    public string WriteBytes(string name, byte[] contents)
    {
        string path = File(name);
        System.IO.File.WriteAllBytes(path, contents);
        return path;
    }

    public void Dispose()
    {
        try
        {
            Directory.Delete(Path, recursive: true);
        }
        catch (IOException)
        {
            // Best effort: a leftover temp folder is harmless.
        }
    }
}
