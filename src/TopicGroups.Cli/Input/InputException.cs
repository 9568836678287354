namespace TopicGroups.Cli.Input;

/// <summary>
/// A problem with a file or option the user gave. The message is one line that names the file
/// (and line, row or field) and says how to fix it; the CLI prints it and exits with code 2.
/// </summary>
internal sealed class InputException(string message) : Exception(message);
