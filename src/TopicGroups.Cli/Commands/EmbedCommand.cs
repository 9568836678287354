using System.CommandLine;
using System.Diagnostics;
using System.Globalization;
using TopicGroups.Cli.Input;
using TopicGroups.Cli.Output;
using TopicGroups.Server.Embedding;

namespace TopicGroups.Cli.Commands;

/// <summary>
/// <c>embed</c>: turns the "text" of every JSONL line into a MiniLM embedding and writes them as a
/// float32 .npy matrix (documents × 384), row i for the i-th document, ready for <c>group --embeddings</c>.
/// </summary>
internal static class EmbedCommand
{
    public static Command Create()
    {
        var input = new Option<string>("--input", "-i") { Description = "JSONL file with \"id\" and \"text\" on every line.", Required = true };
        var output = new Option<string>("--output", "-o") { Description = "The .npy file to write (float32, documents × 384).", Required = true };
        var batchSize = new Option<int>("--batch-size")
        {
            Description = "Texts per model call.",
            DefaultValueFactory = _ => MiniLmEmbedder.DefaultBatchSize,
        };
        GroupCommand.AddPositiveValidator(batchSize);

        var command = new Command("embed", "Embed each document's text with the bundled MiniLM model (offline, CPU) into a .npy file.")
        {
            input, output, batchSize,
        };
        command.SetAction((parseResult, cancellationToken) => Task.FromResult(Run(
            parseResult.GetRequiredValue(input),
            parseResult.GetRequiredValue(output),
            parseResult.GetValue(batchSize),
            Environment.ProcessorCount,
            parseResult.InvocationConfiguration.Output,
            parseResult.InvocationConfiguration.Error,
            cancellationToken)));
        return command;
    }

    public static int Run(string inputPath, string outputPath, int batchSize, int workers, TextWriter output, TextWriter error, CancellationToken cancellationToken)
    {
        JsonlDocuments read;
        try
        {
            read = JsonlDocumentReader.Read(inputPath, readEmbeddings: false);
        }
        catch (InputException ex)
        {
            error.WriteLine(ex.Message);
            return ExitCodes.BadInput;
        }

        string[] texts = read.Documents.Select(d => d.Text).ToArray();
        float[] vectors = new float[(long)texts.Length * MiniLmEmbedder.Dimensions];
        var stopwatch = Stopwatch.StartNew();
        try
        {
            using var embedder = new MiniLmEmbedder();
            TimeSpan loading = stopwatch.Elapsed;
            stopwatch.Restart();
            int truncated;
            using (ProgressLine? progress = ProgressLine.ForTerminal(error))
            {
                truncated = embedder.Embed(texts, vectors, batchSize, workers, progress, cancellationToken);
            }

            TimeSpan embedding = stopwatch.Elapsed;
            NpyWriter.Write(outputPath, vectors, texts.Length, MiniLmEmbedder.Dimensions);
            output.WriteLine(string.Create(CultureInfo.InvariantCulture,
                $"embedded {texts.Length:N0} texts in {embedding.TotalSeconds:F1} s ({texts.Length / embedding.TotalSeconds:F1} docs/s, {workers} worker{(workers == 1 ? "" : "s")}, batch {batchSize}; model load {loading.TotalSeconds:F1} s)"));
            output.WriteLine($"wrote {outputPath}: float32, shape ({texts.Length}, {MiniLmEmbedder.Dimensions})");
            if (truncated > 0)
            {
                output.WriteLine(
                    $"{truncated} text{(truncated == 1 ? " was" : "s were")} longer than the model's window of {MiniLmEmbedder.WindowTokens} word pieces; "
                    + "only the beginning of each was embedded (docs/embedding.md)");
            }
            return ExitCodes.Success;
        }
        catch (OperationCanceledException) when (cancellationToken.IsCancellationRequested)
        {
            error.WriteLine("cancelled");
            return ExitCodes.Cancelled;
        }
        catch (Exception ex) when (ex is IOException or UnauthorizedAccessException)
        {
            error.WriteLine($"{outputPath}: cannot write: {ex.Message}");
            return ExitCodes.Failure;
        }
    }
}
