using TopicGroups.Cli.Commands;
using TopicGroups.Cli.Tests.TestSupport;

namespace TopicGroups.Cli.Tests.Commands;

public sealed class DemoCommandTests : IDisposable
{
    private readonly TempDirectory _directory = new();

    public void Dispose() => _directory.Dispose();

    [Fact]
    public async Task Demo_BundledFiles_EveryTicketSentWithItsOwn384ValueRowAndTwelveGroups()
    {
        var fake = new FakeGrouping();
        string report = _directory.File("demo-report.html");

        var (exitCode, output, error) = await CliRun.RunAsync(fake.Call, "demo", "--report", report);

        Assert.True(exitCode == ExitCodes.Success, error);
        Assert.Equal(DemoCommand.DefaultGroupCount, fake.Options!.GroupCount);
        Assert.True(fake.Options.IncludeMap, "the demo's report needs the map");
        Assert.True(File.Exists(report), "the demo writes its HTML report");
        Assert.Contains($"wrote {report} (HTML report", error);
        string[] lines = File.ReadLines(Path.Combine(AppContext.BaseDirectory, "demo", "tickets.jsonl")).Where(l => l.Trim().Length > 0).ToArray();
        Assert.Equal(lines.Length, fake.Documents!.Count);
        Assert.All(fake.Documents, d => Assert.Equal(384, d.Embedding.Count));
        // The .npy was made by `embed` from these texts: MiniLM rows have unit length.
        Assert.All(fake.Documents, d => Assert.InRange(MathF.Sqrt(d.Embedding.Sum(v => v * v)), 0.999f, 1.001f));
        Assert.Contains("Demo: ", output);
    }

    [Fact]
    public async Task Demo_NoReport_NoFileAndNoMapAsked()
    {
        var fake = new FakeGrouping();

        var (exitCode, _, error) = await CliRun.RunAsync(fake.Call, "demo", "--no-report");

        Assert.True(exitCode == ExitCodes.Success, error);
        Assert.False(fake.Options!.IncludeMap);
        Assert.DoesNotContain("HTML report", error);
    }

    [Fact]
    public void Locate_NotNextToExecutable_FoundInRepositoryAboveCurrentDirectory()
    {
        string repository = Path.Combine(_directory.Path, "repo");
        Directory.CreateDirectory(Path.Combine(repository, "demo"));
        Directory.CreateDirectory(Path.Combine(repository, "src", "deep"));
        File.WriteAllText(Path.Combine(repository, "demo", DemoFiles.DocumentsFileName), "{}");
        File.WriteAllText(Path.Combine(repository, "demo", DemoFiles.EmbeddingsFileName), "");
        string executable = Path.Combine(_directory.Path, "bin");
        Directory.CreateDirectory(executable);

        var found = DemoFiles.Locate(executable, Path.Combine(repository, "src", "deep"));

        Assert.Equal(Path.Combine(repository, "demo", DemoFiles.DocumentsFileName), found?.Documents);
        Assert.Equal(Path.Combine(repository, "demo", DemoFiles.EmbeddingsFileName), found?.Embeddings);
    }

    [Fact]
    public void Locate_NowhereToBeFound_Null()
    {
        Assert.Null(DemoFiles.Locate(_directory.Path, _directory.Path));
    }
}
