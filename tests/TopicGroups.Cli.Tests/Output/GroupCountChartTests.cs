using TopicGroups.Cli.Output;
using TopicGroups.Cli.Tests.TestSupport;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Tests.Output;

public sealed class GroupCountChartTests
{
    [Fact]
    public void Lines_Curve_OneLinePerCountBarsScaledToTheHighestChosenMarked()
    {
        GroupCountChoice choice = Choice(chosen: 4, best: 6, (2, 0.10), (4, 0.19), (6, 0.20), (9, 0.05));

        string[] lines = GroupCountChart.Lines(choice).ToArray();

        Assert.Equal(5, lines.Length);                                                  // header + 4 counts
        Assert.Equal("  groups  silhouette", lines[0][..20]);
        Assert.Equal(new string('=', 18), Bar(lines[1]));                                // 0.10 / 0.20 of 36
        Assert.EndsWith(GroupCountChart.ChosenMark, lines[2]);
        Assert.EndsWith("(highest)", lines[3]);
        Assert.Equal(new string('=', GroupCountChart.BarWidth), Bar(lines[3]));
        Assert.Equal(new string('=', 9), Bar(lines[4]));
        Assert.Single(lines, l => l.Contains(GroupCountChart.ChosenMark, StringComparison.Ordinal));
    }

    [Fact]
    public void Bar_BelowNoStructureThreshold_DotsNegativeNone()
    {
        Assert.Equal("..................", GroupCountChart.Bar(0.01, top: 0.02, noStructureThreshold: 0.05));
        Assert.Equal(string.Empty, GroupCountChart.Bar(-0.03, top: 0.02, noStructureThreshold: 0.05));
        Assert.Equal("=", GroupCountChart.Bar(0.1, top: 100, noStructureThreshold: 0.05));  // a positive silhouette always shows
    }

    [Fact]
    public void TextReport_NoStructure_WarnsBeforeTheGroups()
    {
        GroupDocumentsResponse response = SampleResponses.TwoGroups();
        response.Quality = new GroupingQuality { Silhouette = 0.012, SampleSize = 5, NoStructure = true, NoStructureThreshold = 0.05 };
        response.GroupCountChoice = Choice(chosen: 2, best: 3, (2, 0.011), (3, 0.012));
        response.GroupCountChoice.NoStructure = true;
        var writer = new StringWriter();

        TextReport.Write(writer, response);

        string[] lines = TestSupport.CliRun.Lines(writer.ToString());
        int warning = Array.FindIndex(lines, l => l.StartsWith("NO CLEAR STRUCTURE: mean silhouette 0.012 is below 0.050.", StringComparison.Ordinal));
        Assert.True(warning > 0);
        Assert.True(warning < Array.FindIndex(lines, l => l.StartsWith("Group ", StringComparison.Ordinal)));
        Assert.All(lines.Where(l => l.EndsWith(GroupCountChart.ChosenMark, StringComparison.Ordinal) || l.EndsWith("(highest)", StringComparison.Ordinal)),
            l => Assert.DoesNotContain("=", l));                                        // below the threshold: dotted bars
    }

    [Fact]
    public void TextReport_FixedCountWithoutQuality_NoChartNoQualityLines()
    {
        var writer = new StringWriter();

        TextReport.Write(writer, SampleResponses.TwoGroups());

        string text = writer.ToString();
        Assert.DoesNotContain("Number of groups:", text);
        Assert.DoesNotContain("  quality ", text);
        Assert.DoesNotContain("Silhouette:", text);
    }

    [Fact]
    public void TextReport_CloseToGroupSuggestion_PrintedUnderItsGroup()
    {
        GroupDocumentsResponse response = SampleResponses.TwoGroups();
        response.Groups[0].Suggestions.Add(new GroupSuggestion
        {
            Kind = SuggestionKind.CloseToGroup, OtherGroupId = 1, CentreSimilarity = 0.93, PairSilhouette = 0.02,
            Message = "close to group 1: centres have cosine 0.930 and the two groups' members have silhouette 0.020 against each other; consider merging them",
        });
        var writer = new StringWriter();

        TextReport.Write(writer, response);

        string[] lines = TestSupport.CliRun.Lines(writer.ToString());
        int group2 = Array.FindIndex(lines, l => l.StartsWith("Group 2 ", StringComparison.Ordinal));
        Assert.StartsWith("  suggest   close to group 1: centres have cosine 0.930", lines.Skip(group2).First(l => l.StartsWith("  suggest", StringComparison.Ordinal)));
    }

    private static string Bar(string line) => new(line.Where(c => c == '=').ToArray());

    private static GroupCountChoice Choice(int chosen, int best, params (int Count, double Silhouette)[] curve)
    {
        var choice = new GroupCountChoice
        {
            Minimum = curve.Min(c => c.Count),
            Maximum = curve.Max(c => c.Count),
            ChosenGroupCount = chosen,
            BestGroupCount = best,
            BestSilhouette = curve.Max(c => c.Silhouette),
            NoStructureThreshold = 0.05,
            Explanation = "explanation",
        };
        foreach ((int count, double silhouette) in curve)
        {
            choice.Candidates.Add(new GroupCountCandidate { GroupCount = count, Silhouette = silhouette, Objective = 0.5 });
        }

        return choice;
    }
}
