using TopicGroups.Cli.Output;
using TopicGroups.Cli.Tests.TestSupport;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Tests.Output;

public sealed class TextReportTests
{
    private static string[] ReportLines(GroupDocumentsResponse response)
    {
        var writer = new StringWriter();
        TextReport.Write(writer, response);
        return writer.ToString().Split(Environment.NewLine);
    }

    [Fact]
    public void Write_HeaderLine_StatesDocumentsDimensionsGroupsObjectiveIterationsConvergenceSeconds()
    {
        string header = ReportLines(SampleResponses.TwoGroups())[0];

        Assert.Equal("5 documents, 384 dimensions -> 2 groups   objective 0.6123   7 iterations, converged   0.12 s", header);
    }

    [Fact]
    public void Write_NotConverged_HeaderSaysTheCapStoppedIt()
    {
        GroupDocumentsResponse response = SampleResponses.TwoGroups();
        response.Statistics.Converged = false;

        Assert.Contains("not converged (stopped at the iteration cap)", ReportLines(response)[0]);
    }

    [Fact]
    public void Write_Groups_LargestFirstWithShareCohesionOutliersTerms()
    {
        string[] lines = ReportLines(SampleResponses.TwoGroups());
        int first = Array.FindIndex(lines, l => l.StartsWith("Group 1 ", StringComparison.Ordinal));
        int second = Array.FindIndex(lines, l => l.StartsWith("Group 2 ", StringComparison.Ordinal));

        Assert.True(first >= 0 && second > first, "group 1 (3 documents) comes before group 2 (2 documents)");
        Assert.Equal("Group 1   3 documents (60.0%)   cohesion 0.700   outliers 1", lines[first]);
        Assert.Equal("  terms     parcel, courier", lines[first + 1]);
        Assert.Equal("Group 2   2 documents (40.0%)   cohesion 0.550   outliers 0", lines[second]);
        Assert.Equal("  terms     password, reset link", lines[second + 1]);
    }

    [Fact]
    public void Write_Examples_TwoPerGroupEachOneLineAtMost100Characters()
    {
        string[] lines = ReportLines(SampleResponses.TwoGroups());
        string[] examples = lines.Where(l => l.StartsWith("  example   ", StringComparison.Ordinal)).Select(l => l["  example   ".Length..]).ToArray();

        Assert.Equal(3, examples.Length); // 2 of group 1's three, group 2's only one
        Assert.DoesNotContain(examples, e => e.Contains("third example", StringComparison.Ordinal));
        string shortened = examples[0];
        Assert.True(shortened.Length <= TextReport.ExampleWidth, $"{shortened.Length} characters: {shortened}");
        Assert.EndsWith("…", shortened);
        Assert.StartsWith("My parcel was marked delivered on Tuesday but nothing arrived; the courier's photo", shortened);
        Assert.Equal("Where is my box?", examples[1]);
    }

    [Fact]
    public void Write_Outliers_LastLineCountsThemWithShare()
    {
        string[] lines = ReportLines(SampleResponses.TwoGroups());

        Assert.StartsWith("Outliers: 1 of 5 documents (20.0%)", lines.Last(l => l.Length > 0));
    }

    [Fact]
    public void Write_NoOutliers_SaysNone()
    {
        GroupDocumentsResponse response = SampleResponses.TwoGroups();
        foreach (DocumentPlacement placement in response.Documents)
        {
            placement.IsOutlier = false;
        }

        Assert.Equal("Outliers: none flagged.", ReportLines(response).Last(l => l.Length > 0));
    }

    [Theory]
    [InlineData("short text", 100, "short text")]
    [InlineData("  spaced\n\n out\ttext  ", 100, "spaced out text")]
    [InlineData("one two three four five", 12, "one two…")]
    [InlineData("abcdefghijklmnopqrstuvwxyz", 10, "abcdefghi…")]
    public void OneLine_Texts_CollapsedAndCutAtWordBoundary(string text, int width, string expected)
    {
        Assert.Equal(expected, TextReport.OneLine(text, width));
    }
}
