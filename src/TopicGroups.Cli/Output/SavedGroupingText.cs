using System.Globalization;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Output;

/// <summary>Saved groupings for people: a table for <c>groupings list</c>, and one grouping's groups for <c>groupings show</c>.</summary>
internal static class SavedGroupingText
{
    private static readonly CultureInfo Invariant = CultureInfo.InvariantCulture;

    /// <summary>"week-48" for "groupings/week-48".</summary>
    public static string ShortName(string name) => name.StartsWith("groupings/", StringComparison.Ordinal) ? name["groupings/".Length..] : name;

    public static void WriteList(TextWriter writer, IReadOnlyList<Grouping> groupings, string where)
    {
        if (groupings.Count == 0)
        {
            writer.WriteLine($"No saved groupings in {where}. Save one with: topicgroups group ... --save NAME");
            return;
        }

        int width = Math.Max(4, groupings.Max(g => ShortName(g.Name).Length));
        writer.WriteLine($"{"NAME".PadRight(width)}  CREATED (UTC)     GROUPS  DOCUMENTS  DIMENSIONS");
        foreach (Grouping grouping in groupings)
        {
            writer.WriteLine(string.Create(Invariant,
                $"{ShortName(grouping.Name).PadRight(width)}  {grouping.CreateTime.ToDateTime():yyyy-MM-dd HH:mm}  {grouping.GroupCount,6}  {grouping.DocumentCount,9:N0}  {grouping.Dimensions,10}"));
        }

        writer.WriteLine();
        writer.WriteLine(string.Create(Invariant, $"{groupings.Count} saved grouping{(groupings.Count == 1 ? "" : "s")} in {where}, newest first."));
    }

    public static void WriteGrouping(TextWriter writer, Grouping grouping)
    {
        GroupingOptions options = grouping.Options ?? new GroupingOptions();
        writer.WriteLine(string.Create(Invariant,
            $"{grouping.Name}   saved {grouping.CreateTime.ToDateTime():yyyy-MM-dd HH:mm} UTC   {grouping.DocumentCount:N0} documents, "
            + $"{grouping.Dimensions} dimensions -> {grouping.GroupCount} groups   objective {grouping.Objective:F4}"));
        writer.WriteLine(string.Create(Invariant,
            $"  made with seed {options.Seed}, {options.RestartCount} restarts, {options.TermCount} terms{(options.IncludeBigrams ? " with two-word phrases" : string.Empty)}; "
            + $"routed documents fit no group below a modified z-score of -{grouping.OutlierScoreThreshold:0.##} (groups of {grouping.OutlierMinimumGroupSize}+ members)"));
        foreach (Group group in grouping.Groups.OrderByDescending(g => g.Size).ThenBy(g => g.Id))
        {
            double share = grouping.DocumentCount > 0 ? 100.0 * group.Size / grouping.DocumentCount : 0;
            writer.WriteLine();
            writer.WriteLine(string.Create(Invariant,
                $"Group {group.Id,-3} {group.Size:N0} documents ({share:F1}%)   cohesion {group.Cohesion:F3}   usual similarity {group.SimilarityMedian:F3} (MAD {group.SimilarityMad:F3})"));
            string terms = group.Terms.Count > 0 ? string.Join(", ", group.Terms.Select(t => t.Term)) : "(none)";
            writer.WriteLine($"  terms     {terms}");
            foreach (GroupExample example in group.Examples.Take(TextReport.ExamplesShown))
            {
                writer.WriteLine($"  example   {TextReport.OneLine(example.Text, TextReport.ExampleWidth)}");
            }
        }
    }

    /// <summary>How many routed documents went to each group, largest first, with each group's top terms; then those that fit no group.</summary>
    public static void WriteRouting(TextWriter writer, Grouping grouping, IReadOnlyList<DocumentPlacement> placements)
    {
        int n = placements.Count;
        writer.WriteLine(string.Create(Invariant, $"Routed {n:N0} document{(n == 1 ? "" : "s")} into {grouping.Name} ({grouping.GroupCount} groups)"));
        var termsOf = grouping.Groups.ToDictionary(g => g.Id, g => string.Join(", ", g.Terms.Take(ChangeReportText.TermsShown).Select(t => t.Term)));
        foreach (var group in placements.GroupBy(p => p.GroupId).OrderByDescending(g => g.Count()).ThenBy(g => g.Key))
        {
            int fitting = group.Count(p => !p.IsOutlier);
            writer.WriteLine(string.Create(Invariant,
                $"  Group {group.Key,-4} {group.Count(),7:N0} ({100.0 * group.Count() / n,5:F1}%)   {termsOf.GetValueOrDefault(group.Key, string.Empty)}{(fitting < group.Count() ? $"   ({group.Count() - fitting} fit no group)" : string.Empty)}"));
        }

        int outliers = placements.Count(p => p.IsOutlier);
        writer.WriteLine();
        writer.WriteLine(outliers == 0
            ? "Every document fits its group."
            : string.Create(Invariant,
                $"{outliers:N0} document{(outliers == 1 ? "" : "s")} ({100.0 * outliers / n:F1}%) fit no group: far less similar to their nearest centre than that group's members were; the JSON (--output) marks them \"outlier\"."));
    }
}
