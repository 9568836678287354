using TopicGroups.Core.Terms;

namespace TopicGroups.Core.Grouping;

public readonly record struct GroupExample(int DocumentIndex, string DocumentId, string Text, float Similarity);

/// <summary>One theme. Ids run 1..k by size, largest first (ties: lower centroid index first).</summary>
public sealed record GroupSummary(
    int Id,
    int Size,
    double Cohesion,
    IReadOnlyList<WeightedTerm> Terms,
    IReadOnlyList<GroupExample> Examples,
    int OutlierCount)
{
    /// <summary>Separation, sampled silhouette and suggestions (docs/algorithms.md §9); null only for results built by hand.</summary>
    public GroupQuality? Quality { get; init; }
}

/// <summary>Where one document landed. GroupId and RunnerUpGroupId are group ids (1..k).</summary>
public readonly record struct DocumentPlacement(
    string DocumentId,
    int GroupId,
    float Similarity,
    float Margin,
    int RunnerUpGroupId,
    bool IsOutlier)
{
    /// <summary>Cosine similarity to the runner-up group's centre (0 when k = 1).</summary>
    public float RunnerUpSimilarity { get; init; }
}

public sealed record RunStatistics(
    double Objective,
    int Iterations,
    bool Converged,
    TimeSpan Elapsed,
    TimeSpan SeedingTime,
    int RestartCount,
    int DocumentCount,
    int Dimensions);

public sealed record GroupingResult(
    IReadOnlyList<GroupSummary> Groups,
    IReadOnlyList<DocumentPlacement> Documents,
    RunStatistics Statistics,
    float[] Centroids)  // k × d, row-major; row g - 1 is the centre of the group with id g
{
    /// <summary>The curve and the reason when the pipeline chose the number of groups; null for a fixed count.</summary>
    public Clustering.GroupCountSearchResult? GroupCountChoice { get; init; }

    /// <summary>The grouping's sampled mean silhouette and the no-structure verdict; null only for results built by hand.</summary>
    public GroupingQuality? Quality { get; init; }

    /// <summary>Every document and centre on a 2-D map when <see cref="GroupingOptions.IncludeMap"/> was set; null otherwise.</summary>
    public DocumentMap? Map { get; init; }
}

public enum GroupingStage
{
    Seeding,
    Refining,
    Describing,

    /// <summary>Scoring candidate counts; Iteration is the candidate's group count and Objective its mean silhouette.</summary>
    ChoosingGroupCount,
}

public readonly record struct GroupingProgress(GroupingStage Stage, int Restart, int Iteration, double Objective);
