using System.CommandLine;
using System.Diagnostics;
using System.Globalization;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Commands;

/// <summary>
/// <c>demo</c>: groups the bundled support tickets (texts plus MiniLM embeddings), prints the report and writes
/// the HTML report (demo-report.html in the current directory unless --report says otherwise), so the whole path can
/// be seen working without any data of one's own.
/// </summary>
internal static class DemoCommand
{
    /// <summary>A group count that suits the bundled tickets.</summary>
    public const int DefaultGroupCount = 12;

    /// <summary>The HTML report's file, in the current directory, when --report is not given.</summary>
    public const string DefaultReportFileName = "demo-report.html";

    public static Command Create(GroupingCall grouping)
    {
        Option<GroupCountSpec> groups = GroupCountOption.Create(GroupCountSpec.Fixed(DefaultGroupCount));
        var options = new GroupingOptionSet();
        var noReport = new Option<bool>("--no-report") { Description = $"Do not write the HTML report ({DefaultReportFileName} by default)." };
        var command = new Command("demo", $"Group the bundled demo tickets, print the report and write {DefaultReportFileName}.") { groups, noReport };
        options.AddTo(command);

        command.SetAction(async (parseResult, cancellationToken) =>
        {
            TextWriter output = parseResult.InvocationConfiguration.Output;
            TextWriter error = parseResult.InvocationConfiguration.Error;
            var files = DemoFiles.Locate(AppContext.BaseDirectory, Environment.CurrentDirectory);
            if (files is null)
            {
                error.WriteLine(
                    $"demo data not found: looked for {DemoFiles.DocumentsFileName} and {DemoFiles.EmbeddingsFileName} in "
                    + string.Join(", ", DemoFiles.Candidates(AppContext.BaseDirectory, Environment.CurrentDirectory).Take(2))
                    + " and the demo/ folders above; run from the repository or rebuild the CLI");
                return ExitCodes.Failure;
            }

            var (documents, embeddings) = files.Value;
            output.WriteLine($"Demo: {documents} with embeddings from {Path.GetFileName(embeddings)}");
            output.WriteLine();
            string? report = parseResult.GetValue(noReport) ? null : parseResult.GetValue(options.Report) ?? DefaultReportFileName;
            GroupingOptions request = options.ToProto(parseResult, parseResult.GetValue(groups));
            request.IncludeMap = report is not null;
            var run = new GroupRun(
                documents,
                embeddings,
                request,
                options.Server(parseResult),
                parseResult.GetValue(options.Output),
                parseResult.GetValue(options.Csv))
            {
                ReportPath = report,
            };
            var stopwatch = Stopwatch.StartNew();
            int exitCode = await GroupCommand.RunAsync(run, grouping, output, error, cancellationToken);
            if (exitCode == ExitCodes.Success)
            {
                error.WriteLine(string.Create(CultureInfo.InvariantCulture, $"demo finished in {stopwatch.Elapsed.TotalSeconds:F2} s end to end (reading files, service, report)"));
            }

            return exitCode;
        });
        return command;
    }
}
