namespace TopicGroups.Cli.Commands;

/// <summary>
/// Finds the bundled demo data (tickets.jsonl and tickets.npy): first in demo/ next to the executable
/// (the build copies it there), then in demo/ of the repository, searched upward from the current directory.
/// </summary>
internal static class DemoFiles
{
    public const string DocumentsFileName = "tickets.jsonl";
    public const string EmbeddingsFileName = "tickets.npy";

    public static (string Documents, string Embeddings)? Locate(string executableDirectory, string currentDirectory)
    {
        foreach (string directory in Candidates(executableDirectory, currentDirectory))
        {
            string documents = Path.Combine(directory, DocumentsFileName);
            string embeddings = Path.Combine(directory, EmbeddingsFileName);
            if (File.Exists(documents) && File.Exists(embeddings))
            {
                return (documents, embeddings);
            }
        }

        return null;
    }

    public static IEnumerable<string> Candidates(string executableDirectory, string currentDirectory)
    {
        yield return Path.Combine(executableDirectory, "demo");
        for (DirectoryInfo? directory = new(currentDirectory); directory is not null; directory = directory.Parent)
        {
            yield return Path.Combine(directory.FullName, "demo");
        }
    }
}
