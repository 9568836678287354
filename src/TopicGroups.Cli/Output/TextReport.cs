using System.Globalization;
using System.Text;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Output;

/// <summary>
/// The readable report printed to stdout: one header line with the run's figures, one block per
/// group (largest first) with size, cohesion, outliers, top terms and two example texts, then a
/// line on outliers in total.
/// </summary>
internal static class TextReport
{
    /// <summary>Examples are cut to about this many characters so each fits on one line.</summary>
    public const int ExampleWidth = 100;

    /// <summary>How many examples per group the report shows (the JSON holds all that were returned).</summary>
    public const int ExamplesShown = 2;

    private static readonly CultureInfo Invariant = CultureInfo.InvariantCulture;

    public static void Write(TextWriter writer, GroupDocumentsResponse response)
    {
        RunStatistics statistics = response.Statistics ?? new RunStatistics();
        int documentCount = statistics.DocumentCount > 0 ? statistics.DocumentCount : response.Documents.Count;

        writer.WriteLine(Header(response, statistics, documentCount));
        if (EmbeddingLine(statistics) is string embedding)
        {
            writer.WriteLine(embedding);
        }

        if (response.GroupCountChoice is { } choice)
        {
            writer.WriteLine();
            GroupCountChart.Write(writer, choice);
        }

        if (NoStructureWarning(response) is string warning)
        {
            writer.WriteLine();
            writer.WriteLine(warning);
        }

        foreach (Group group in response.Groups.OrderByDescending(g => g.Size).ThenBy(g => g.Id))
        {
            writer.WriteLine();
            WriteGroup(writer, group, documentCount);
        }

        writer.WriteLine();
        writer.WriteLine(OutlierSummary(response, documentCount));
        if (QualitySummary(response) is string quality)
        {
            writer.WriteLine(quality);
        }
    }

    /// <summary>The overall silhouette line; null when the reply has no quality figure (one group, or an older server).</summary>
    internal static string? QualitySummary(GroupDocumentsResponse response)
    {
        GroupingQuality? quality = response.Quality;
        if (quality is null || !quality.HasSilhouette)
        {
            return null;
        }

        int suggestions = response.Groups.Sum(g => g.Suggestions.Count);
        string sampled = quality.SampleSize < response.Documents.Count ? "a sample of " + Count(quality.SampleSize, "document") : "every document";
        return string.Create(Invariant,
            $"Silhouette: {quality.Silhouette:F3} (mean over {sampled}; 1 = groups far apart, near 0 = no structure); "
            + $"{Count(suggestions, "suggestion")} to review.");
    }

    /// <summary>A loud line when the grouping shows no structure: the groups are cuts, not themes.</summary>
    internal static string? NoStructureWarning(GroupDocumentsResponse response)
    {
        if (response.Quality is not { NoStructure: true, HasSilhouette: true } quality)
        {
            return null;
        }

        return string.Create(Invariant,
            $"NO CLEAR STRUCTURE: mean silhouette {quality.Silhouette:F3} is below {quality.NoStructureThreshold:F3}. These documents do not "
            + $"fall into distinct themes; the groups below are arbitrary cuts. Read the terms and examples with that in mind.");
    }

    /// <summary>When the service embedded the texts: which model, how long, and how many texts were cut to its window.</summary>
    internal static string? EmbeddingLine(RunStatistics statistics)
    {
        if (statistics.EmbeddingModel.Length == 0)
        {
            return null;
        }

        string line = string.Create(Invariant, $"Texts embedded by the service with {statistics.EmbeddingModel} in {statistics.EmbeddingSeconds:F1} s");
        return statistics.TruncatedTextCount == 0
            ? line + "."
            : line + string.Create(Invariant,
                $"; {Count(statistics.TruncatedTextCount, "text")} {(statistics.TruncatedTextCount == 1 ? "was" : "were")} longer than its window of 512 word pieces, so only the beginning counts.");
    }

    internal static string Header(GroupDocumentsResponse response, RunStatistics statistics, int documentCount)
    {
        string convergence = statistics.Converged ? "converged" : "not converged (stopped at the iteration cap)";
        return string.Create(Invariant,
            $"{Count(documentCount, "document")}, {Count(statistics.Dimensions, "dimension")} -> {Count(response.Groups.Count, "group")}"
            + $"   objective {statistics.Objective:F4}   {Count(statistics.Iterations, "iteration")}, {convergence}   {statistics.Seconds:F2} s");
    }

    private static void WriteGroup(TextWriter writer, Group group, int documentCount)
    {
        double share = documentCount > 0 ? 100.0 * group.Size / documentCount : 0;
        writer.WriteLine(string.Create(Invariant,
            $"Group {group.Id,-3} {Count(group.Size, "document")} ({share:F1}%)   cohesion {group.Cohesion:F3}   outliers {group.OutlierCount}"));

        string terms = group.Terms.Count > 0
            ? string.Join(", ", group.Terms.Select(t => t.Term))
            : "(none: the texts are empty or only stop words)";
        writer.WriteLine($"  terms     {terms}");
        if (QualityLine(group) is string quality)
        {
            writer.WriteLine($"  quality   {quality}");
        }

        foreach (GroupExample example in group.Examples.Take(ExamplesShown))
        {
            writer.WriteLine($"  example   {OneLine(example.Text, ExampleWidth)}");
        }

        foreach (GroupSuggestion suggestion in group.Suggestions)
        {
            writer.WriteLine($"  suggest   {suggestion.Message}");
        }
    }

    /// <summary>"silhouette 0.214, nearest group 3 (centre cosine 0.712)"; null when the reply carries no quality figures.</summary>
    internal static string? QualityLine(Group group)
    {
        var parts = new List<string>(2);
        if (group.HasSilhouette)
        {
            parts.Add(string.Create(Invariant, $"silhouette {group.Silhouette:F3}"));
        }

        if (group.NearestGroupId > 0)
        {
            parts.Add(string.Create(Invariant, $"nearest group {group.NearestGroupId} (centre cosine {group.NearestGroupSimilarity:F3})"));
        }

        return parts.Count > 0 ? string.Join(", ", parts) : null;
    }

    internal static string OutlierSummary(GroupDocumentsResponse response, int documentCount)
    {
        int outliers = response.Documents.Count(d => d.IsOutlier);
        if (outliers == 0)
        {
            return "Outliers: none flagged.";
        }

        double share = documentCount > 0 ? 100.0 * outliers / documentCount : 0;
        return string.Create(Invariant,
            $"Outliers: {outliers} of {Count(documentCount, "document")} ({share:F1}%) sit far from their group's centre; the JSON (--output) and CSV (--csv) mark them \"outlier\".");
    }

    /// <summary>
    /// Collapses runs of whitespace (line breaks included) to one space and cuts the text at a word
    /// boundary so the result is at most <paramref name="width"/> characters, ending in "…" when cut.
    /// </summary>
    internal static string OneLine(string text, int width)
    {
        var builder = new StringBuilder(Math.Min(text.Length, width + 16));
        bool pendingSpace = false;
        foreach (char c in text)
        {
            if (char.IsWhiteSpace(c) || char.IsControl(c))
            {
                pendingSpace = builder.Length > 0;
                continue;
            }

            if (pendingSpace)
            {
                builder.Append(' ');
                pendingSpace = false;
            }

            builder.Append(c);
            if (builder.Length > width)
            {
                break;
            }
        }

        if (builder.Length <= width)
        {
            return builder.ToString();
        }

        // Keep width - 1 characters plus the ellipsis; prefer to cut at the last space.
        int cut = width - 1;
        int lastSpace = builder.ToString(0, cut + 1).LastIndexOf(' ');
        if (lastSpace >= width / 2)
        {
            cut = lastSpace;
        }

        if (char.IsHighSurrogate(builder[cut - 1]))
        {
            cut--;
        }

        return builder.ToString(0, cut).TrimEnd() + "…";
    }

    private static string Count(int count, string noun) =>
        string.Create(Invariant, $"{count:N0} {noun}{(count == 1 ? "" : "s")}");
}
