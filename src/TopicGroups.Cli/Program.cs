using System.CommandLine;
using System.CommandLine.Invocation;
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
        if (parseResult.Action is ParseErrorAction parseError)
        {
            // The errors alone, each on one line, then where the options are listed; not the whole help page.
            parseError.ShowHelp = false;
            int code = await parseResult.InvokeAsync(configuration, cancellationToken);
            string command = string.Join(' ', parseResult.CommandResult.Command is RootCommand ? ["topicgroups"] : ["topicgroups", parseResult.CommandResult.Command.Name]);
            (configuration?.Error ?? Console.Error).WriteLine($"Run '{command} --help' to see the options.");
            return code == 0 ? ExitCodes.Success : ExitCodes.BadInput;
        }

        return await parseResult.InvokeAsync(configuration, cancellationToken);
    }

    /// <summary>The command tree; <paramref name="grouping"/> is the service call (a fake in tests).</summary>
    internal static RootCommand BuildRootCommand(GroupingCall grouping) =>
        new("topicgroups: group documents (texts plus embeddings) into themes and describe each theme.")
        {
            GroupCommand.Create(grouping),
            EmbedCommand.Create(),
            DemoCommand.Create(grouping),
            RouteCommand.Create(),
            GroupingsCommand.Create(),
            BenchCommand.Create(),
        };
}
