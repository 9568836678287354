using TopicGroups.Core.Terms;

namespace TopicGroups.Core.Grouping;

/// <summary>
/// One group as kept in a <see cref="GroupingSnapshot"/>: its description, and the median and MAD of its
/// members' similarities to the centre, which the outlier rule needs to judge documents routed in later.
/// </summary>
public sealed record SnapshotGroup(
    int Id,
    int Size,
    double Cohesion,
    int OutlierCount,
    IReadOnlyList<WeightedTerm> Terms,
    IReadOnlyList<GroupExample> Examples,
    double SimilarityMedian,
    double SimilarityMad);

/// <summary>
/// Everything kept of a grouping to route new documents into it and to continue its theme ids in a later
/// grouping: unit centres, group descriptions, the outlier rule with its per-group statistics.
/// </summary>
public sealed record GroupingSnapshot
{
    /// <summary>k × Dimensions, row-major, unit rows; row i is the centre of Groups[i].</summary>
    public required float[] Centroids { get; init; }

    public required int Dimensions { get; init; }

    public required IReadOnlyList<SnapshotGroup> Groups { get; init; }

    /// <summary>Documents in the batch that was grouped.</summary>
    public required int DocumentCount { get; init; }

    /// <summary>Mean cosine of the documents to their group centre.</summary>
    public required double Objective { get; init; }

    /// <summary>The outlier rule's threshold on the modified z-score (see <see cref="GroupingOptions.OutlierScoreThreshold"/>).</summary>
    public required double OutlierScoreThreshold { get; init; }

    public required int OutlierMinimumGroupSize { get; init; }

    /// <summary>
    /// The highest theme id ever given in this grouping's line of continuations, faded themes included;
    /// new themes in a later grouping get ids above it, so an id never comes back with another meaning.
    /// </summary>
    public required int HighestGroupId { get; init; }

    /// <summary>Keeps a grouping's result: centres, descriptions, and each group's median and MAD of member similarities.</summary>
    /// <param name="result">The pipeline's result (or its relabelled form after <see cref="Continuity"/>).</param>
    /// <param name="options">The options the result was made with (for the outlier rule).</param>
    /// <param name="highestGroupId">The reference's <see cref="HighestGroupId"/> when the result continued one; 0 otherwise.</param>
    public static GroupingSnapshot Capture(GroupingResult result, GroupingOptions options, int highestGroupId = 0)
    {
        ArgumentNullException.ThrowIfNull(result);
        ArgumentNullException.ThrowIfNull(options);
        int k = result.Groups.Count;
        int d = result.Statistics.Dimensions;
        if (result.Centroids.Length != k * d)
        {
            throw new ArgumentException($"result has {result.Centroids.Length} centroid values for {k} groups of {d} dimensions.", nameof(result));
        }

        var positionOfId = new Dictionary<int, int>(k);
        for (int g = 0; g < k; g++)
        {
            positionOfId.Add(result.Groups[g].Id, g);
        }

        // Member similarities gathered per group, one array each, then summarised by median and MAD.
        var members = new float[k][];
        var filled = new int[k];
        for (int g = 0; g < k; g++)
        {
            members[g] = new float[result.Groups[g].Size];
        }

        foreach (DocumentPlacement placement in result.Documents)
        {
            int g = positionOfId[placement.GroupId];
            members[g][filled[g]++] = placement.Similarity;
        }

        var groups = new SnapshotGroup[k];
        int highest = highestGroupId;
        for (int g = 0; g < k; g++)
        {
            GroupSummary group = result.Groups[g];
            double median = 0;
            double mad = 0;
            if (filled[g] > 0)
            {
                median = OutlierRule.Median(members[g].AsSpan(0, filled[g]), out mad);
            }

            groups[g] = new SnapshotGroup(
                group.Id, group.Size, group.Cohesion, group.OutlierCount, group.Terms, group.Examples, median, mad);
            highest = Math.Max(highest, group.Id);
        }

        return new GroupingSnapshot
        {
            Centroids = result.Centroids,
            Dimensions = d,
            Groups = groups,
            DocumentCount = result.Statistics.DocumentCount,
            Objective = result.Statistics.Objective,
            OutlierScoreThreshold = options.OutlierScoreThreshold,
            OutlierMinimumGroupSize = options.OutlierMinimumGroupSize,
            HighestGroupId = highest,
        };
    }
}
