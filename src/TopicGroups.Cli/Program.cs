using System.CommandLine;
using TopicGroups.Cli.Commands;

namespace TopicGroups.Cli;

/// <summary>Entry point of <c>topicgroups</c>: builds the root command and runs it.</summary>
internal static class Program
{
    public static Task<int> Main(string[] args) => RunAsync(args, ServiceGrouping.RunAsync);

    /// <summary>Parses and runs; usage errors (unknown option, missing value) exit with code 2.</summary>
    internal static async Task<int> RunAsync(
        string[] args,
        GroupingCall grouping,
        InvocationConfiguration? configuration = null,
        CancellationToken cancellationToken = default)
    {
        ParseResult parseResult = BuildRootCommand(grouping).Parse(args);
        int exitCode = await parseResult.InvokeAsync(configuration, cancellationToken);
        return parseResult.Errors.Count > 0 ? ExitCodes.BadInput : exitCode;
    }

    /// <summary>The command tree; <paramref name="grouping"/> is the service call (a fake in tests).</summary>
    internal static RootCommand BuildRootCommand(GroupingCall grouping) =>
        new("topicgroups: group documents (texts plus embeddings) into themes and describe each theme.")
        {
            GroupCommand.Create(grouping),
            EmbedCommand.Create(),
            DemoCommand.Create(grouping),
        };
}
