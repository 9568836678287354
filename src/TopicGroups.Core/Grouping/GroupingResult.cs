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
    int OutlierCount);

/// <summary>Where one document landed. GroupId and RunnerUpGroupId are group ids (1..k).</summary>
public readonly record struct DocumentPlacement(
    string DocumentId,
    int GroupId,
    float Similarity,
    float Margin,
    int RunnerUpGroupId,
    bool IsOutlier);

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
    float[] Centroids);  // k × d, row-major; row g - 1 is the centre of the group with id g

public enum GroupingStage
{
    Seeding,
    Refining,
    Describing,
}

public readonly record struct GroupingProgress(GroupingStage Stage, int Restart, int Iteration, double Objective);
