namespace TopicGroups.Cli.Input;

/// <summary>Opens input files, turning "not found" and "no access" into one-line <see cref="InputException"/>s.</summary>
internal static class InputFiles
{
    public static FileStream OpenRead(string path)
    {
        string fileName = Path.GetFileName(path);
        try
        {
            return new FileStream(path, FileMode.Open, FileAccess.Read, FileShare.Read, bufferSize: 1 << 16);
        }
        catch (Exception ex) when (ex is FileNotFoundException or DirectoryNotFoundException)
        {
            throw new InputException($"{fileName}: file not found (looked for {Path.GetFullPath(path)})");
        }
        catch (UnauthorizedAccessException)
        {
            throw new InputException($"{fileName}: permission denied (at {Path.GetFullPath(path)})");
        }
        catch (IOException ex)
        {
            throw new InputException($"{fileName}: cannot open: {ex.Message}");
        }
    }
}
