using TopicGroups.Core.Clustering;
using TopicGroups.Core.Terms;

namespace TopicGroups.Core.Grouping;

public static class GroupingDefaults
{
    public const int ExampleCount = 3;
    public const double OutlierScoreThreshold = 3.5;
    public const int OutlierMinimumGroupSize = 8;
}

public sealed record GroupingOptions
{
    public required int GroupCount { get; init; }

    /// <value>The default is 0.</value>
    public ulong Seed { get; init; } = SphericalKMeansDefaults.Seed;

    /// <value>The default is 4 restarts.</value>
    public int RestartCount { get; init; } = SphericalKMeansDefaults.RestartCount;

    /// <value>The default is 50 iterations.</value>
    public int MaxIterations { get; init; } = SphericalKMeansDefaults.MaxIterations;

    /// <value>The default is 1e-5.</value>
    public double ConvergenceTolerance { get; init; } = SphericalKMeansDefaults.ConvergenceTolerance;

    /// <value>The default is 8 terms per group.</value>
    public int TermCount { get; init; } = GroupTermsDefaults.TermCount;

    /// <value>The default is 3 examples per group.</value>
    public int ExampleCount { get; init; } = GroupingDefaults.ExampleCount;

    /// <value>The default is false.</value>
    public bool IncludeBigrams { get; init; }

    /// <summary>
    /// A member is an outlier when its modified z-score of similarity within its group is below minus
    /// this value (Iglewicz &amp; Hoaglin, 1993). Higher flags fewer documents.
    /// </summary>
    /// <value>The default is 3.5.</value>
    public double OutlierScoreThreshold { get; init; } = GroupingDefaults.OutlierScoreThreshold;

    /// <summary>Groups smaller than this have no usual similarity to compare with: nothing in them is flagged.</summary>
    /// <value>The default is 8 members.</value>
    public int OutlierMinimumGroupSize { get; init; } = GroupingDefaults.OutlierMinimumGroupSize;

    /// <value>The default is -1: all cores. Results do not depend on it.</value>
    public int MaxDegreeOfParallelism { get; init; } = -1;

    /// <summary>
    /// Warm start: the first restart starts from these unit centres (GroupCount × d, row-major), e.g. a saved
    /// grouping's (<see cref="GroupingSnapshot.Centroids"/>), instead of k-means++ seeds.
    /// </summary>
    /// <value>The default is null: every restart seeds with k-means++.</value>
    public float[]? InitialCentroids { get; init; }

    internal SphericalKMeansOptions ToClusteringOptions() => new()
    {
        GroupCount = GroupCount,
        Seed = Seed,
        RestartCount = RestartCount,
        MaxIterations = MaxIterations,
        ConvergenceTolerance = ConvergenceTolerance,
        MaxDegreeOfParallelism = MaxDegreeOfParallelism,
        InitialCentroids = InitialCentroids,
    };
}
