using System.Globalization;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Output;

/// <summary>
/// The change report printed after a grouping that continued a saved one: a summary line, then the themes
/// that continued (with sizes then and now, each as a share of its batch, and the terms that rose or fell),
/// the new themes and the faded ones, each with the closest theme on the other side.
/// </summary>
internal static class ChangeReportText
{
    private static readonly CultureInfo Invariant = CultureInfo.InvariantCulture;

    /// <summary>Top terms shown per theme; the JSON (--output) holds them all.</summary>
    public const int TermsShown = 4;

    public static void Write(TextWriter writer, ChangeReport report)
    {
        int continued = report.Themes.Count(t => t.Kind == ThemeChangeKind.Continued);
        int fresh = report.Themes.Count(t => t.Kind == ThemeChangeKind.New);
        int faded = report.Themes.Count(t => t.Kind == ThemeChangeKind.Faded);
        writer.WriteLine(string.Create(Invariant,
            $"Changes since {report.Reference} ({report.ReferenceDocumentCount:N0} documents then, {report.DocumentCount:N0} now): "
            + $"{continued} continued, {fresh} new, {faded} faded"));
        writer.WriteLine(string.Create(Invariant,
            $"  themes continue when their centres have cosine >= {report.MinMatchSimilarity:F2}{(report.WarmStarted ? "; started from the reference's centres" : string.Empty)}"));

        WriteSection(writer, "Continued", report.Themes.Where(t => t.Kind == ThemeChangeKind.Continued), report, theme =>
        {
            var lines = new List<string> { string.Create(Invariant, $"centre cosine {theme.CentreSimilarity:F2}") };
            if (theme.TermsRose.Count > 0)
            {
                lines.Add("rose: " + string.Join(", ", theme.TermsRose));
            }

            if (theme.TermsFell.Count > 0)
            {
                lines.Add("fell: " + string.Join(", ", theme.TermsFell));
            }

            return string.Join("   ", lines);
        });
        // A new theme close to an earlier one that continued elsewhere has most likely split off it; a faded theme
        // close to one that continues has most likely merged into it. Said as a likelihood: only centres were compared.
        WriteSection(writer, "New", report.Themes.Where(t => t.Kind == ThemeChangeKind.New), report, theme =>
            Closest("closest earlier theme", theme) + (theme.CentreSimilarity >= report.MinMatchSimilarity ? ", which continued as a closer group: probably split off it" : string.Empty));
        WriteSection(writer, "Faded", report.Themes.Where(t => t.Kind == ThemeChangeKind.Faded), report, theme =>
            Closest("closest theme now", theme) + (theme.CentreSimilarity >= report.MinMatchSimilarity ? ", which continues a closer theme: probably merged into it" : string.Empty));
    }

    private static void WriteSection(
        TextWriter writer, string title, IEnumerable<ThemeChange> themes, ChangeReport report, Func<ThemeChange, string> detail)
    {
        List<ThemeChange> list = themes.ToList();
        if (list.Count == 0)
        {
            return;
        }

        writer.WriteLine();
        writer.WriteLine(title);
        foreach (ThemeChange theme in list)
        {
            string terms = theme.Terms.Count > 0 ? string.Join(", ", theme.Terms.Take(TermsShown)) : "(no terms)";
            writer.WriteLine(string.Create(Invariant,
                $"  Group {theme.GroupId,-4} {Sizes(theme, report),-34} {terms}"));
            writer.WriteLine($"             {detail(theme)}");
        }
    }

    /// <summary>"120 -> 150 (4.0% -> 4.4%)": counts, and shares of each batch, since the batches differ in size.</summary>
    internal static string Sizes(ThemeChange theme, ChangeReport report)
    {
        double shareThen = report.ReferenceDocumentCount > 0 ? 100.0 * theme.SizeThen / report.ReferenceDocumentCount : 0;
        double shareNow = report.DocumentCount > 0 ? 100.0 * theme.SizeNow / report.DocumentCount : 0;
        return string.Create(Invariant, $"{theme.SizeThen:N0} -> {theme.SizeNow:N0} ({shareThen:F1}% -> {shareNow:F1}%)");
    }

    private static string Closest(string what, ThemeChange theme) =>
        theme.ClosestGroupId == 0
            ? $"no {what}"
            : string.Create(Invariant, $"{what}: group {theme.ClosestGroupId} at centre cosine {theme.CentreSimilarity:F2}");
}
