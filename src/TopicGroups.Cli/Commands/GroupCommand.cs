using System.CommandLine;
using System.CommandLine.Parsing;
using Grpc.Core;
using TopicGroups.Cli.Input;
using TopicGroups.Cli.Output;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Commands;

/// <summary>What one grouping run reads, asks for and writes.</summary>
internal sealed record GroupRun(
    string InputPath,
    string? EmbeddingsPath,
    GroupingOptions Options,
    Uri? Server,
    string? JsonPath,
    string? CsvPath)
{
    /// <summary>Where to write the HTML report (--report); null for none. Asking for it asks the service for map coordinates.</summary>
    public string? ReportPath { get; init; }
}

/// <summary>
/// <c>group</c>: reads documents (JSONL, with embeddings inline, in a .npy, or none: the service then embeds the
/// texts), sends them to the service, prints the report and optionally writes JSON, CSV and an HTML report.
/// </summary>
internal static class GroupCommand
{
    public static Command Create(GroupingCall grouping)
    {
        var input = new Option<string>("--input", "-i")
        {
            Description = "JSONL file: one {\"id\", \"text\", \"embedding\"} object per line. Leave \"embedding\" out of every line to have the service embed the texts, or pass --embeddings.",
            Required = true,
        };
        var embeddings = new Option<string?>("--embeddings", "-e")
        {
            Description = "A .npy matrix (float32 or float64, shape (documents, dimensions)); row i is the i-th document's embedding. Any \"embedding\" in the JSONL is then ignored.",
        };
        Option<GroupCountSpec> groups = GroupCountOption.Create();
        var options = new GroupingOptionSet();
        var saving = new SavedGroupingOptionSet();

        var command = new Command("group", "Group documents by their embeddings and describe each group.")
        {
            input, embeddings, groups,
        };
        options.AddTo(command);
        saving.AddTo(command);

        command.SetAction((parseResult, cancellationToken) =>
        {
            GroupingOptions request = options.ToProto(parseResult, parseResult.GetValue(groups));
            saving.ApplyTo(parseResult, request);
            return saving.RunAsync(parseResult, options.Server(parseResult), server =>
            {
                var run = new GroupRun(
                    parseResult.GetRequiredValue(input),
                    parseResult.GetValue(embeddings),
                    request,
                    server,
                    parseResult.GetValue(options.Output),
                    parseResult.GetValue(options.Csv))
                {
                    ReportPath = parseResult.GetValue(options.Report),
                };
                return RunAsync(run, grouping, parseResult.InvocationConfiguration.Output, parseResult.InvocationConfiguration.Error, cancellationToken);
            }, cancellationToken);
        });
        return command;
    }

    public static async Task<int> RunAsync(GroupRun run, GroupingCall grouping, TextWriter output, TextWriter error, CancellationToken cancellationToken)
    {
        GroupDocumentsResponse response;
        List<Document> documents;
        try
        {
            documents = ReadDocuments(run);
            GroupCountOption.CheckAgainst(run.Options, documents.Count, Path.GetFileName(run.InputPath));

            using ProgressLine? progress = ProgressLine.ForTerminal(error, documents.Count);
            response = await grouping(run.Server, documents, run.Options, progress, cancellationToken);
        }
        catch (InputException ex)
        {
            error.WriteLine(ex.Message);
            return ExitCodes.BadInput;
        }
        catch (RpcException ex) when (ex.StatusCode == StatusCode.Cancelled && cancellationToken.IsCancellationRequested)
        {
            error.WriteLine("cancelled");
            return ExitCodes.Cancelled;
        }
        catch (RpcException ex)
        {
            foreach (string line in RpcErrorText.Lines(ex, run.Server))
            {
                error.WriteLine(line);
            }

            return RpcErrorText.IsBadInput(ex.StatusCode) ? ExitCodes.BadInput : ExitCodes.Failure;
        }
        catch (OperationCanceledException) when (cancellationToken.IsCancellationRequested)
        {
            error.WriteLine("cancelled");
            return ExitCodes.Cancelled;
        }
        catch (HttpRequestException ex)
        {
            error.WriteLine($"cannot reach the server at {run.Server}: {ex.Message}");
            return ExitCodes.Failure;
        }

        TextReport.Write(output, response);
        if (response.Changes is not null)
        {
            output.WriteLine();
            ChangeReportText.Write(output, response.Changes);
        }

        if (response.SavedGroupingName.Length > 0)
        {
            output.WriteLine();
            output.WriteLine(
                $"Saved as {response.SavedGroupingName}. Route new documents into it with: topicgroups route --grouping {SavedGroupingText.ShortName(response.SavedGroupingName)} --input FILE");
        }

        return WriteFiles(run, response, documents, error);
    }

    /// <summary>Reads the JSONL and, when given, the .npy; each document ends up holding its own embedding.</summary>
    internal static List<Document> ReadDocuments(GroupRun run)
    {
        JsonlDocuments read = JsonlDocumentReader.Read(run.InputPath, readEmbeddings: run.EmbeddingsPath is null);
        if (run.EmbeddingsPath is not null)
        {
            AttachEmbeddings(read, run.EmbeddingsPath);
        }

        return read.Documents;
    }

    private static void AttachEmbeddings(JsonlDocuments read, string npyPath)
    {
        using NpyReader npy = NpyReader.Open(npyPath);
        string npyName = Path.GetFileName(npyPath);
        if (npy.Rows != read.Documents.Count)
        {
            throw new InputException(
                $"{npyName}: has {npy.Rows} rows but {read.FileName} has {read.Documents.Count} documents; row i must be the embedding of the i-th document");
        }

        if (npy.Columns == 0)
        {
            throw new InputException($"{npyName}: rows have 0 values; an embedding needs at least one");
        }

        read.Dimensions = npy.Columns;
        float[] row = new float[npy.Columns];
        for (int i = 0; i < npy.Rows; i++)
        {
            npy.ReadRow(row);
            int bad = IndexOfNonFinite(row);
            if (bad >= 0)
            {
                string what = float.IsNaN(row[bad]) ? "NaN" : "infinite or beyond float32's range (±3.4e38)";
                throw new InputException(
                    $"{npyName} row {i}: value {bad} is {what}; embeddings must be finite numbers (document on {read.FileName} line {read.LineNumbers[i]})");
            }

            Google.Protobuf.Collections.RepeatedField<float> embedding = read.Documents[i].Embedding;
            embedding.Capacity = row.Length;
            embedding.Add(row);
        }
    }

    private static int IndexOfNonFinite(ReadOnlySpan<float> row)
    {
        for (int j = 0; j < row.Length; j++)
        {
            if (!float.IsFinite(row[j]))
            {
                return j;
            }
        }

        return -1;
    }

    private static int WriteFiles(GroupRun run, GroupDocumentsResponse response, IReadOnlyList<Document> documents, TextWriter error)
    {
        string? current = null;
        try
        {
            if (run.JsonPath is not null)
            {
                current = run.JsonPath;
                JsonResultWriter.Write(run.JsonPath, response, run.Options);
                error.WriteLine($"wrote {run.JsonPath} (groups, {response.Documents.Count} document placements, statistics)");
            }

            if (run.CsvPath is not null)
            {
                current = run.CsvPath;
                CsvAssignmentsWriter.Write(run.CsvPath, response);
                error.WriteLine($"wrote {run.CsvPath} ({response.Documents.Count} rows)");
            }

            if (run.ReportPath is not null)
            {
                current = run.ReportPath;
                HtmlReport.Write(run.ReportPath, response, documents, new HtmlReportSource(Path.GetFileName(run.InputPath), DateTimeOffset.UtcNow));
                error.WriteLine($"wrote {Path.GetFullPath(run.ReportPath)} (HTML report: open it in a browser)");
            }
        }
        catch (Exception ex) when (ex is IOException or UnauthorizedAccessException)
        {
            error.WriteLine($"{current}: cannot write: {ex.Message}");
            return ExitCodes.Failure;
        }

        return ExitCodes.Success;
    }

    internal static void AddPositiveValidator(Option<int> option)
    {
        option.Validators.Add(result =>
        {
            if (result.Tokens.Count > 0 && result.GetValueOrDefault<int>() < 1)
            {
                result.AddError($"{option.Name} must be at least 1 (got {result.GetValueOrDefault<int>()})");
            }
        });
    }
}
