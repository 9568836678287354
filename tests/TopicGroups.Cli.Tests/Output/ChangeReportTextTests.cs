using TopicGroups.Cli.Output;
using TopicGroups.Cli.Tests.TestSupport;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Tests.Output;

public sealed class ChangeReportTextTests
{
    private static ThemeChange Theme(int id, ThemeChangeKind kind, int then, int now, float similarity, int closest, string[] terms, string[]? rose = null, string[]? fell = null)
    {
        var theme = new ThemeChange { GroupId = id, Kind = kind, SizeThen = then, SizeNow = now, CentreSimilarity = similarity, ClosestGroupId = closest };
        theme.Terms.Add(terms);
        theme.TermsRose.Add(rose ?? []);
        theme.TermsFell.Add(fell ?? []);
        return theme;
    }

    private static ChangeReport Report()
    {
        var report = new ChangeReport { Reference = "groupings/week-47", ReferenceDocumentCount = 400, DocumentCount = 500, MinMatchSimilarity = 0.7f, WarmStarted = true };
        report.Themes.Add(Theme(3, ThemeChangeKind.Continued, 100, 150, 0.96f, 0, ["refund", "deposit", "charged", "twice", "card"], rose: ["twice"], fell: ["late"]));
        report.Themes.Add(Theme(7, ThemeChangeKind.New, 0, 40, 0.81f, 2, ["app", "crash"]));
        report.Themes.Add(Theme(8, ThemeChangeKind.New, 0, 10, 0.35f, 1, ["helmet"]));
        report.Themes.Add(Theme(5, ThemeChangeKind.Faded, 20, 0, 0.74f, 3, ["voucher"]));
        return report;
    }

    [Fact]
    public void Write_MixedReport_SummarySectionsSizesSharesAndTermChanges()
    {
        var writer = new StringWriter();

        ChangeReportText.Write(writer, Report());

        string[] lines = CliRun.Lines(writer.ToString());
        Assert.Equal("Changes since groupings/week-47 (400 documents then, 500 now): 1 continued, 2 new, 1 faded", lines[0]);
        Assert.Equal("  themes continue when their centres have cosine >= 0.70; started from the reference's centres", lines[1]);
        Assert.Equal(["Continued", "New", "Faded"], lines.Where(l => !l.StartsWith(' ')).Skip(1));
        Assert.Contains(lines, l => l.Contains("Group 3") && l.Contains("100 -> 150 (25.0% -> 30.0%)") && l.Contains("refund, deposit, charged, twice") && !l.Contains("card"));
        Assert.Contains(lines, l => l.Trim() == "centre cosine 0.96   rose: twice   fell: late");
    }

    [Fact]
    public void Write_NewOrFadedCloseToAContinuingTheme_SaysProbablySplitOrMerged()
    {
        var writer = new StringWriter();

        ChangeReportText.Write(writer, Report());

        string text = writer.ToString();
        Assert.Contains("closest earlier theme: group 2 at centre cosine 0.81, which continued as a closer group: probably split off it", text);
        Assert.Contains("closest earlier theme: group 1 at centre cosine 0.35\n", text.ReplaceLineEndings("\n"));
        Assert.Contains("closest theme now: group 3 at centre cosine 0.74, which continues a closer theme: probably merged into it", text);
    }
}
