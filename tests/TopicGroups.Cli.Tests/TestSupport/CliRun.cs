using System.CommandLine;
using TopicGroups.Cli.Commands;

namespace TopicGroups.Cli.Tests.TestSupport;

/// <summary>Runs the real parser and command tree with captured stdout and stderr.</summary>
internal static class CliRun
{
    public static async Task<(int ExitCode, string Output, string Error)> RunAsync(GroupingCall grouping, params string[] args)
    {
        var output = new StringWriter();
        var error = new StringWriter();
        int exitCode = await Program.RunAsync(args, grouping, new InvocationConfiguration { Output = output, Error = error });
        return (exitCode, output.ToString(), error.ToString());
    }

    public static string[] Lines(string text) =>
        text.Split('\n', StringSplitOptions.RemoveEmptyEntries).Select(l => l.TrimEnd('\r')).ToArray();
}
