using System.Globalization;
using System.Text;
using System.Text.Json;
using TopicGroups.Cli.Commands;
using TopicGroups.Cli.Output;
using TopicGroups.Cli.Tests.TestSupport;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Tests.Commands;

// --groups auto / 5..40 / K, the outlier and sample options, through the real parser with a fake service,
// plus one run against the real in-process service.
public sealed class GroupCountOptionTests : IDisposable
{
    private readonly TempDirectory _directory = new();

    public void Dispose() => _directory.Dispose();

    [Theory]
    [InlineData("12", 12, 0, 0)]
    [InlineData("auto", 0, 0, 0)]
    [InlineData("AUTO", 0, 0, 0)]
    [InlineData("5..40", 0, 5, 40)]
    [InlineData("2..2", 0, 2, 2)]
    public void TryParse_CountAutoOrRange_Spec(string text, int count, int minimum, int maximum)
    {
        Assert.True(GroupCountOption.TryParse(text, out GroupCountSpec spec, out string? problem), problem);
        Assert.Equal(new GroupCountSpec(count, minimum, maximum), spec);
    }

    [Theory]
    [InlineData("0", "is not a count of at least 1")]
    [InlineData("-3", "is not a count of at least 1")]
    [InlineData("many", "is not a count of at least 1, 'auto', or a range like 5..40")]
    [InlineData("1..5", "a range starts at 2 or more")]
    [InlineData("9..4", "write the smaller count first, e.g. 4..9")]
    [InlineData("5..", "two counts joined by '..'")]
    [InlineData("..5", "two counts joined by '..'")]
    public void TryParse_Bad_ProblemNamesTheFix(string text, string expected)
    {
        Assert.False(GroupCountOption.TryParse(text, out _, out string? problem));
        Assert.Contains(expected, problem);
        Assert.StartsWith($"--groups '{text}'", problem);
    }

    [Fact]
    public async Task Group_GroupsAuto_SendsZeroWithoutRange()
    {
        string documents = WriteDocuments("d.jsonl", 12);
        var fake = new ChoosingFake();

        var (exitCode, _, error) = await CliRun.RunAsync(fake.Call, "group", "-i", documents, "--groups", "auto");

        Assert.True(exitCode == ExitCodes.Success, error);
        Assert.Equal(0, fake.Options!.GroupCount);
        Assert.Null(fake.Options.GroupCountRange);
    }

    [Fact]
    public async Task Group_GroupsRange_SendsRangeAndOtherNewOptions()
    {
        string documents = WriteDocuments("d.jsonl", 12);
        var fake = new ChoosingFake();

        var (exitCode, _, error) = await CliRun.RunAsync(fake.Call,
            "group", "-i", documents, "--groups", "3..6", "--outlier-threshold", "2.5", "--outlier-min-group", "5", "--silhouette-sample", "300");

        Assert.True(exitCode == ExitCodes.Success, error);
        Assert.Equal(0, fake.Options!.GroupCount);
        Assert.Equal((3, 6), (fake.Options.GroupCountRange.Minimum, fake.Options.GroupCountRange.Maximum));
        Assert.Equal((2.5, 5, 300), (fake.Options.OutlierThreshold, fake.Options.OutlierMinimumGroupSize, fake.Options.SilhouetteSampleSize));
    }

    [Fact]
    public async Task Group_FixedCount_NoRangeAndServerDefaultsForNewOptions()
    {
        string documents = WriteDocuments("d.jsonl", 6);
        var fake = new FakeGrouping();

        var (exitCode, _, _) = await CliRun.RunAsync(fake.Call, "group", "-i", documents, "--groups", "2");

        Assert.Equal(ExitCodes.Success, exitCode);
        Assert.Equal(2, fake.Options!.GroupCount);
        Assert.Null(fake.Options.GroupCountRange);
        Assert.Equal((0.0, 0, 0), (fake.Options.OutlierThreshold, fake.Options.OutlierMinimumGroupSize, fake.Options.SilhouetteSampleSize));
    }

    [Theory]
    [InlineData(10, "5..10", "--groups 5..10 reaches past what 10 documents in d.jsonl allow: choosing tries at most 9 groups (one group must hold two documents)")]
    [InlineData(2, "auto", "--groups auto needs at least 3 documents and d.jsonl has 2; give a count from 1 to 2")]
    public async Task Group_ChoosingBeyondTheBatch_OneLineExitTwoNoCall(int count, string groups, string expected)
    {
        string documents = WriteDocuments("d.jsonl", count);
        var fake = new ChoosingFake();

        var (exitCode, _, error) = await CliRun.RunAsync(fake.Call, "group", "-i", documents, "--groups", groups);

        Assert.Equal(ExitCodes.BadInput, exitCode);
        Assert.Equal([expected], CliRun.Lines(error));
        Assert.Equal(0, fake.Calls);
    }

    [Theory]
    [InlineData("--groups", "7..3", "write the smaller count first")]
    [InlineData("--outlier-threshold", "-1", "--outlier-threshold must be a positive number (got -1)")]
    [InlineData("--silhouette-sample", "0", "--silhouette-sample must be at least 1 (got 0)")]
    public async Task Group_BadNewOptionValue_ParseErrorExitTwo(string option, string value, string expected)
    {
        string documents = WriteDocuments("d.jsonl", 6);
        string[] args = option == "--groups" ? ["group", "-i", documents, option, value] : ["group", "-i", documents, "-k", "2", option, value];
        var fake = new ChoosingFake();

        var (exitCode, _, error) = await CliRun.RunAsync(fake.Call, args);

        Assert.Equal(ExitCodes.BadInput, exitCode);
        Assert.Contains(expected, error);
        Assert.Equal(0, fake.Calls);
    }

    [Fact]
    public async Task Group_Auto_ReportShowsChartWithChosenMarkQualityAndSuggestions()
    {
        string documents = WriteDocuments("d.jsonl", 12);
        string json = _directory.File("result.json");
        var fake = new ChoosingFake();

        var (exitCode, output, error) = await CliRun.RunAsync(fake.Call, "group", "-i", documents, "--groups", "auto", "--output", json);

        Assert.True(exitCode == ExitCodes.Success, error);
        string[] lines = CliRun.Lines(output);
        Assert.Contains(lines, l => l.StartsWith("Number of groups: 3, chosen from 2..5 by mean cosine silhouette (4 counts tried", StringComparison.Ordinal));
        string chosen = Assert.Single(lines, l => l.EndsWith(GroupCountChart.ChosenMark, StringComparison.Ordinal));
        Assert.StartsWith("       3       0.400  ====================================", chosen);   // the highest bar is full width
        Assert.Contains(lines, l => l.StartsWith("       5       0.100  =========  ", StringComparison.Ordinal));  // 0.1 / 0.4 of 36
        Assert.Contains(lines, l => l.Contains("  quality   silhouette 0.410, nearest group 2 (centre cosine 0.300)", StringComparison.Ordinal));
        Assert.Contains(lines, l => l.StartsWith("  suggest   probably two themes: cohesion 0.500", StringComparison.Ordinal));
        Assert.Contains(lines, l => l.StartsWith("Silhouette: 0.400 (mean over every document", StringComparison.Ordinal) && l.EndsWith("1 suggestion to review.", StringComparison.Ordinal));

        using JsonDocument result = JsonDocument.Parse(File.ReadAllBytes(json));
        JsonElement choice = result.RootElement.GetProperty("group_count_choice");
        Assert.Equal(3, choice.GetProperty("chosen").GetInt32());
        Assert.Equal("highest_silhouette", choice.GetProperty("reason").GetString());
        Assert.Equal([2, 3, 4, 5], choice.GetProperty("curve").EnumerateArray().Select(c => c.GetProperty("group_count").GetInt32()));
        Assert.Equal([false, true, false, false], choice.GetProperty("curve").EnumerateArray().Select(c => c.GetProperty("chosen").GetBoolean()));
        Assert.Equal(JsonValueKind.Null, result.RootElement.GetProperty("options").GetProperty("group_count").ValueKind);
        Assert.Equal(0.4, result.RootElement.GetProperty("quality").GetProperty("silhouette").GetDouble());
        JsonElement first = result.RootElement.GetProperty("groups")[0];
        Assert.Equal(2, first.GetProperty("quality").GetProperty("separation").GetProperty("nearest_group").GetInt32());
        JsonElement suggestion = Assert.Single(first.GetProperty("suggestions").EnumerateArray());
        Assert.Equal("probably_two_themes", suggestion.GetProperty("kind").GetString());
        Assert.Equal([3, 2], suggestion.GetProperty("part_sizes").EnumerateArray().Select(e => e.GetInt32()));
        Assert.Equal(0.31, suggestion.GetProperty("split_silhouette").GetDouble());
    }

    [Fact]
    public async Task Group_AutoInProcess_RealServiceChoosesTheThemeCountAndMarksIt()
    {
        string input = WriteThemes("themes.jsonl", themes: 4, perTheme: 15);
        string json = _directory.File("result.json");

        var (exitCode, output, error) = await CliRun.RunAsync(ServiceGrouping.RunAsync, "group", "--input", input, "--groups", "auto", "--output", json);

        Assert.True(exitCode == ExitCodes.Success, error);
        string[] lines = CliRun.Lines(output);
        Assert.StartsWith("60 documents, 16 dimensions -> 4 groups", lines[0]);
        Assert.Contains(lines, l => l.StartsWith("Number of groups: 4, chosen from 2..5", StringComparison.Ordinal));
        Assert.Matches(@"^\s+4\s+0\.\d{3}\s+=+\s+0\.\d{3}\s+<- chosen$", Assert.Single(lines, l => l.EndsWith(GroupCountChart.ChosenMark, StringComparison.Ordinal)));
        Assert.Equal(4, lines.Count(l => l.StartsWith("  quality   silhouette ", StringComparison.Ordinal)));
        using JsonDocument result = JsonDocument.Parse(File.ReadAllBytes(json));
        Assert.Equal(4, result.RootElement.GetProperty("group_count_choice").GetProperty("curve").GetArrayLength());  // 2..5, all tried
        Assert.False(result.RootElement.GetProperty("quality").GetProperty("no_structure").GetBoolean());
    }

    private string WriteDocuments(string name, int count)
    {
        var lines = Enumerable.Range(0, count).Select(i =>
            $"{{\"id\": \"doc-{i}\", \"text\": \"ticket number {i}\", \"embedding\": [{(i % 3 == 0 ? "0.9, 0.1, 0.1" : i % 3 == 1 ? "0.1, 0.9, 0.1" : "0.1, 0.1, 0.9")}]}}");
        return _directory.WriteText(name, string.Join("\n", lines) + "\n");
    }

    // Theme t points along coordinate 4t with seeded noise of at most 0.15 per coordinate.
    private string WriteThemes(string name, int themes, int perTheme)
    {
        var random = new Random(20261202);
        var builder = new StringBuilder();
        for (int i = 0; i < themes * perTheme; i++)
        {
            float[] embedding = new float[16];
            for (int j = 0; j < 16; j++)
            {
                embedding[j] = (float)((random.NextDouble() - 0.5) * 0.3);
            }

            embedding[4 * (i % themes)] += 1f;
            builder.Append(CultureInfo.InvariantCulture,
                $"{{\"id\": \"t{i:D2}\", \"text\": \"ticket about theme {i % themes}\", \"embedding\": [{string.Join(", ", embedding.Select(v => v.ToString("R", CultureInfo.InvariantCulture)))}]}}\n");
        }

        return _directory.WriteText(name, builder.ToString());
    }

    /// <summary>A fake service that "chooses" 3 groups from a hand-written curve and adds quality figures and one suggestion.</summary>
    private sealed class ChoosingFake
    {
        public GroupingOptions? Options { get; private set; }

        public int Calls { get; private set; }

        public GroupingCall Call => (server, documents, options, progress, cancellationToken) =>
        {
            Calls++;
            Options = options;
            GroupDocumentsResponse response = FakeGrouping.Respond(documents, options.GroupCount > 0 ? options.GroupCount : 3);
            if (options.GroupCount == 0)
            {
                var choice = new GroupCountChoice
                {
                    Minimum = 2, Maximum = 5, ChosenGroupCount = 3, BestGroupCount = 3, BestSilhouette = 0.4,
                    Reason = GroupCountChoiceReason.HighestSilhouette, Explanation = "3 groups: the highest mean silhouette, 0.400 (4 counts tried from 2 to 5).",
                    NoStructureThreshold = 0.05, TieTolerance = 0.01, CandidateDocumentCount = documents.Count, SilhouetteSampleSize = documents.Count, Seconds = 0.02,
                };
                foreach ((int k, double s) in new[] { (2, 0.2), (3, 0.4), (4, 0.3), (5, 0.1) })
                {
                    choice.Candidates.Add(new GroupCountCandidate { GroupCount = k, Silhouette = s, Objective = 0.5 + k / 100.0, Seconds = 0.005 });
                }

                response.GroupCountChoice = choice;
            }

            response.Quality = new GroupingQuality { Silhouette = 0.4, SampleSize = documents.Count, NoStructureThreshold = 0.05 };
            for (int g = 0; g < response.Groups.Count; g++)
            {
                Group group = response.Groups[g];
                group.Silhouette = 0.41 - g / 100.0;
                group.SilhouetteSampleCount = group.Size;
                group.NearestGroupId = g == 0 ? 2 : 1;
                group.NearestGroupSimilarity = 0.3;
            }

            var split = new GroupSuggestion
            {
                Kind = SuggestionKind.ProbablyTwoThemes, Cohesion = 0.5, SplitCohesion = 0.7, SpreadRemoved = 0.4, SplitSilhouette = 0.31,
                Message = "probably two themes: cohesion 0.500; split in two (about 3 + 2 documents) it rises to 0.700",
            };
            split.PartSizes.Add([3, 2]);
            response.Groups[0].Suggestions.Add(split);
            return Task.FromResult(response);
        };
    }
}
