namespace TopicGroups.Cli.Commands;

internal static class ExitCodes
{
    public const int Success = 0;

    /// <summary>The service, the network or the file system failed.</summary>
    public const int Failure = 1;

    /// <summary>A file, an option or a document was wrong; the message says which and how to fix it.</summary>
    public const int BadInput = 2;

    /// <summary>Interrupted (Ctrl+C): 128 + SIGINT, as shells report it.</summary>
    public const int Cancelled = 130;
}
