using System.Globalization;

namespace TopicGroups.Core.Grouping;

/// <summary>Thresholds of the quality suggestions, quoted in docs/algorithms.md §9.</summary>
public static class GroupQualityDefaults
{
    /// <summary>Groups smaller than this are never called two themes: too few members to split with confidence.</summary>
    public const int SplitMinimumGroupSize = 10;

    /// <summary>
    /// "Probably two themes" needs the best two-way split inside the group to have a mean silhouette of at least
    /// 0.25: the lower bound of "a weak structure" on Kaufman &amp; Rousseeuw's scale (1990, ch. 2).
    /// </summary>
    public const double SplitMinimumSilhouette = 0.25;

    /// <summary>... and to remove at least this share of the group's spread, 1 − cohesion ("improves cohesion a lot").</summary>
    public const double SplitMinimumSpreadRemoved = 0.2;

    /// <summary>... and to leave at least this share of the members in the smaller part (a few stragglers are not a theme).</summary>
    public const double SplitMinimumPartShare = 0.1;

    /// <summary>The two-way split of a large group is computed on a seeded sample of at most this many members.</summary>
    public const int SplitSampleSize = 2_000;

    /// <summary>
    /// "Close to group N": N's centre is this group's nearest, and the two groups' members, scored as if the two
    /// were the only groups, have a mean silhouette below 0.1: they can hardly be told apart.
    /// </summary>
    public const double CloseMaximumPairSilhouette = 0.1;
}

public enum SuggestionKind
{
    /// <summary>Low cohesion with a strong two-way split inside: the group probably mixes two themes.</summary>
    ProbablyTwoThemes,

    /// <summary>Another group's centre is so close that the two groups can hardly be told apart.</summary>
    CloseToGroup,
}

/// <summary>
/// A suggestion for a person to consider, with the numbers behind it. Nothing is changed because of it.
/// ProbablyTwoThemes fills PartSizes, SplitCohesion, SpreadRemoved and SplitSilhouette;
/// CloseToGroup fills OtherGroupId, CentreSimilarity and PairSilhouette.
/// </summary>
public sealed record GroupSuggestion
{
    public required SuggestionKind Kind { get; init; }

    /// <summary>The cohesion of the group the suggestion is about (mean cosine of its members to its centre).</summary>
    public required double Cohesion { get; init; }

    /// <summary>Estimated members in each part of the best two-way split, larger first.</summary>
    public IReadOnlyList<int> PartSizes { get; init; } = [];

    /// <summary>Mean cosine of the (sampled) members to the centre of their own part.</summary>
    public double SplitCohesion { get; init; }

    /// <summary>(SplitCohesion − cohesion) / (1 − cohesion): the share of the group's spread the split removes.</summary>
    public double SpreadRemoved { get; init; }

    /// <summary>Mean silhouette of the two-way split inside the group.</summary>
    public double SplitSilhouette { get; init; }

    /// <summary>The group whose centre is nearest (its id, 1..k).</summary>
    public int OtherGroupId { get; init; }

    /// <summary>Cosine between the two centres.</summary>
    public double CentreSimilarity { get; init; }

    /// <summary>Mean silhouette of the two groups' sampled members, scored as if they were the only two groups.</summary>
    public double PairSilhouette { get; init; }

    /// <summary>One plain-language sentence with the numbers; built from the figures, so a relabelled id stays right.</summary>
    public string Message => Kind switch
    {
        SuggestionKind.ProbablyTwoThemes => string.Create(CultureInfo.InvariantCulture,
            $"probably two themes: cohesion {Cohesion:F3}; split in two (about {string.Join(" + ", PartSizes)} documents) "
            + $"it rises to {SplitCohesion:F3}, removing {SpreadRemoved:P0} of the spread, and the two parts have silhouette {SplitSilhouette:F3}"),
        SuggestionKind.CloseToGroup => string.Create(CultureInfo.InvariantCulture,
            $"close to group {OtherGroupId}: centres have cosine {CentreSimilarity:F3} and the two groups' members have "
            + $"silhouette {PairSilhouette:F3} against each other; consider merging them"),
        _ => Kind.ToString(),
    };
}

/// <summary>How well one group holds together and stands apart.</summary>
public sealed record GroupQuality
{
    /// <summary>The group whose centre is nearest to this one's (its id), 0 when there is one group.</summary>
    public required int NearestGroupId { get; init; }

    /// <summary>Separation: cosine of this centre to the nearest other centre (lower = better separated); NaN for one group.</summary>
    public required double NearestCentreSimilarity { get; init; }

    /// <summary>Mean silhouette of this group's sampled members; NaN when none was sampled or there is one group.</summary>
    public required double Silhouette { get; init; }

    /// <summary>Members of this group in the silhouette sample.</summary>
    public required int SampledMembers { get; init; }

    public required IReadOnlyList<GroupSuggestion> Suggestions { get; init; }
}

/// <summary>The whole grouping's quality figure.</summary>
/// <param name="Silhouette">Mean cosine silhouette of the sampled documents; NaN with one group.</param>
/// <param name="SampleSize">Documents whose silhouettes were averaged (all of them when the batch is no larger than the sample size).</param>
/// <param name="NoStructure">True when Silhouette is below NoStructureThreshold: the groups are cuts, not themes.</param>
public sealed record GroupingQuality(double Silhouette, int SampleSize, bool NoStructure, double NoStructureThreshold);
