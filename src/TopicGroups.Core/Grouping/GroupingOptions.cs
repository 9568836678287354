using TopicGroups.Core.Clustering;
using TopicGroups.Core.Terms;

namespace TopicGroups.Core.Grouping;

public static class GroupingDefaults
{
    public const int ExampleCount = 3;
    public const double OutlierScoreThreshold = 3.5;
    public const int OutlierMinimumGroupSize = 8;

    /// <summary>GroupCount value that asks the pipeline to choose the number of groups.</summary>
    public const int ChooseGroupCount = 0;
}

public sealed record GroupingOptions
{
    /// <summary>
    /// Number of groups, or <see cref="GroupingDefaults.ChooseGroupCount"/> (0) to choose it by the mean cosine
    /// silhouette within MinimumGroupCount..MaximumGroupCount (see <see cref="GroupCountSearch"/>).
    /// </summary>
    public required int GroupCount { get; init; }

    /// <summary>When choosing: the smallest count to consider; 0 = the default range's (2).</summary>
    public int MinimumGroupCount { get; init; }

    /// <summary>When choosing: the largest count to consider; 0 = the default range's, min(40, ⌊√(n / 2)⌋).</summary>
    public int MaximumGroupCount { get; init; }

    /// <summary>Documents whose silhouettes are averaged, for choosing the count and for the quality figures.</summary>
    /// <value>The default is 5,000; every document when the batch is no larger (then the figure is exact).</value>
    public int SilhouetteSampleSize { get; init; } = GroupCountSearchDefaults.SilhouetteSampleSize;

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

    /// <summary>Also place every document on a 2-D map (<see cref="GroupingResult.Map"/>): PCA of the unit vectors.</summary>
    /// <value>The default is false.</value>
    public bool IncludeMap { get; init; }

    /// <summary>Documents the map's axes are fitted on (a seeded sample of larger batches; every document is placed).</summary>
    /// <value>The default is 5,000.</value>
    public int MapSampleSize { get; init; } = DocumentMap.DefaultSampleSize;

    internal GroupCountSearchOptions ToSearchOptions() => new()
    {
        MinimumGroupCount = MinimumGroupCount,
        MaximumGroupCount = MaximumGroupCount,
        Seed = Seed,
        SilhouetteSampleSize = SilhouetteSampleSize,
        MaxDegreeOfParallelism = MaxDegreeOfParallelism,
    };

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
