using System.Globalization;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Output;

/// <summary>
/// The evidence behind a chosen group count, as plain text: one line per count tried with its mean silhouette
/// drawn as a bar of '=' (longest bar = best silhouette), the objective beside it, and the chosen count marked.
/// Bars of counts below the no-structure threshold end in '.', so a flat, low curve reads as "no groups here".
/// </summary>
internal static class GroupCountChart
{
    /// <summary>Characters of the longest bar.</summary>
    public const int BarWidth = 36;

    public const string ChosenMark = "<- chosen";

    private static readonly CultureInfo Invariant = CultureInfo.InvariantCulture;

    public static void Write(TextWriter writer, GroupCountChoice choice)
    {
        writer.WriteLine(string.Create(Invariant,
            $"Number of groups: {choice.ChosenGroupCount}, chosen from {choice.Minimum}..{choice.Maximum} by mean cosine silhouette "
            + $"({choice.Candidates.Count} counts tried, {choice.Seconds:F2} s)"));
        foreach (string line in Lines(choice))
        {
            writer.WriteLine(line);
        }

        writer.WriteLine($"  {choice.Explanation}");
    }

    internal static IEnumerable<string> Lines(GroupCountChoice choice)
    {
        double top = Math.Max(choice.Candidates.Count > 0 ? choice.Candidates.Max(c => c.Silhouette) : 0, 1e-9);
        int countWidth = Math.Max(6, choice.Maximum.ToString(Invariant).Length + 1);
        yield return string.Create(Invariant, $"  {"groups".PadLeft(countWidth)}  silhouette  {new string(' ', BarWidth)}  objective");
        foreach (GroupCountCandidate candidate in choice.Candidates.OrderBy(c => c.GroupCount))
        {
            string bar = Bar(candidate.Silhouette, top, choice.NoStructureThreshold);
            string mark = candidate.GroupCount == choice.ChosenGroupCount ? $"  {ChosenMark}"
                : candidate.GroupCount == choice.BestGroupCount ? "  (highest)"
                : string.Empty;
            yield return string.Create(Invariant,
                $"  {candidate.GroupCount.ToString(Invariant).PadLeft(countWidth)}  {candidate.Silhouette,10:F3}  {bar.PadRight(BarWidth)}  {candidate.Objective,9:F3}{mark}");
        }
    }

    /// <summary>A bar proportional to silhouette / top; a count whose silhouette is below the threshold gets a '.' bar; negative gets none.</summary>
    internal static string Bar(double silhouette, double top, double noStructureThreshold)
    {
        if (!(silhouette > 0))
        {
            return string.Empty;
        }

        int length = Math.Max(1, (int)Math.Round(BarWidth * Math.Min(1.0, silhouette / top)));
        return new string(silhouette < noStructureThreshold ? '.' : '=', length);
    }
}
