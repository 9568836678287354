using System.CommandLine;
using TopicGroups.Cli.Input;
using TopicGroups.Cli.Output;
using TopicGroups.Client;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Commands;

/// <summary>
/// <c>route</c>: places documents (JSONL, embeddings inline or in a .npy) in a saved grouping's themes, prints
/// how many went where and how many fit no group, and optionally writes every placement as JSON.
/// </summary>
internal static class RouteCommand
{
    public static Command Create()
    {
        var grouping = new Option<string>("--grouping", "-g")
        {
            Description = "The saved grouping to route into: its name (as given to group --save) or groupings/NAME.",
            Required = true,
        };
        var input = new Option<string>("--input", "-i")
        {
            Description = "JSONL file: one {\"id\", \"text\", \"embedding\"} object per line (\"embedding\" optional with --embeddings; the text is not sent).",
            Required = true,
        };
        var embeddings = new Option<string?>("--embeddings", "-e")
        {
            Description = "A .npy matrix (float32 or float64, shape (documents, dimensions)); row i is the i-th document's embedding.",
        };
        var output = new Option<string?>("--output", "-o")
        {
            Description = "Write every placement as JSON (\"documents\": id, group, similarity, margin, runner_up_group, outlier) to this file.",
        };
        var target = new ServiceTarget();
        var command = new Command("route", "Place documents in the themes of a saved grouping; flag those that fit no group.")
        {
            grouping, input, embeddings, output,
        };
        target.AddTo(command);

        command.SetAction((parseResult, cancellationToken) =>
        {
            TextWriter stdout = parseResult.InvocationConfiguration.Output;
            TextWriter stderr = parseResult.InvocationConfiguration.Error;
            string name = ServiceTarget.ResourceName(parseResult.GetRequiredValue(grouping));
            string? outputPath = parseResult.GetValue(output);
            return ServiceTarget.RunAsync(target.Server(parseResult), parseResult.GetValue(target.Store), stderr, async session =>
            {
                var run = new GroupRun(parseResult.GetRequiredValue(input), parseResult.GetValue(embeddings), new GroupingOptions(), null, null, null);
                List<Document> documents = GroupCommand.ReadDocuments(run);
                int missing = documents.FindIndex(d => d.Embedding.Count == 0);
                if (missing >= 0)
                {
                    throw new InputException(
                        $"{Path.GetFileName(run.InputPath)}: document \"{documents[missing].Id}\" has no \"embedding\"; routing compares embeddings with the "
                        + "grouping's centres: put them in the JSONL or give --embeddings FILE.npy (row i for the i-th document)");
                }

                TopicGroupsClient client = session.Client;
                Grouping saved = await client.GetGroupingAsync(name, GroupingView.Basic, cancellationToken);
                IReadOnlyList<DocumentPlacement> placements = await client.RouteDocumentsAsync(name, documents, cancellationToken);
                SavedGroupingText.WriteRouting(stdout, saved, placements);
                if (outputPath is not null)
                {
                    RoutingJsonWriter.Write(outputPath, name, placements);
                    stderr.WriteLine($"wrote {outputPath} ({placements.Count} document placements)");
                }

                return ExitCodes.Success;
            }, cancellationToken);
        });
        return command;
    }
}
