namespace TopicGroups.Core.Clustering;

/// <summary>Named defaults, quoted in the docs and the proto comments.</summary>
public static class SphericalKMeansDefaults
{
    public const int RestartCount = 4;
    public const int MaxIterations = 50;
    public const double ConvergenceTolerance = 1e-5;
    public const ulong Seed = 0;
}

public sealed record SphericalKMeansOptions
{
    /// <summary>Number of groups k; at least 1 and at most the number of rows.</summary>
    public required int GroupCount { get; init; }

    /// <value>The default is 0. The same seed gives the same result for any thread count.</value>
    public ulong Seed { get; init; } = SphericalKMeansDefaults.Seed;

    /// <value>The default is 4 restarts; the run with the highest objective is kept.</value>
    public int RestartCount { get; init; } = SphericalKMeansDefaults.RestartCount;

    /// <value>The default is 50 iterations per restart.</value>
    public int MaxIterations { get; init; } = SphericalKMeansDefaults.MaxIterations;

    /// <summary>
    /// A run stops when no document changes group, or when the objective's relative gain in one
    /// iteration falls below this value.
    /// </summary>
    /// <value>The default is 1e-5.</value>
    public double ConvergenceTolerance { get; init; } = SphericalKMeansDefaults.ConvergenceTolerance;

    /// <summary>
    /// Warm start: when set, restart 0 starts from these centres (GroupCount × d, row-major, unit rows, e.g. a
    /// saved grouping's) instead of k-means++ seeds; later restarts seed as usual and the best objective is kept.
    /// </summary>
    /// <value>The default is null: every restart seeds with k-means++.</value>
    public float[]? InitialCentroids { get; init; }

    /// <summary>When set, every run performs exactly MaxIterations iterations (for benchmarks).</summary>
    public bool RunAllIterations { get; init; }

    /// <value>The default is -1: all cores. Results do not depend on it.</value>
    public int MaxDegreeOfParallelism { get; init; } = -1;

    /// <summary>
    /// When positive, refine by mini-batches (Sculley, 2010): each of MaxIterations steps assigns this many randomly
    /// drawn rows and moves their centroids toward them, then one full pass assigns every row. Faster than full
    /// iterations on very large batches, at some cost in objective (see docs/performance.md for measured figures).
    /// Convergence is not tested: every run takes exactly MaxIterations steps.
    /// </summary>
    /// <value>The default is 0: every iteration uses every row.</value>
    public int MiniBatchSize { get; init; }

    /// <summary>
    /// When set, k-means++ draws from every row even for large inputs instead of a per-restart sample of
    /// max(8192, 128 × GroupCount) rows (for comparisons and benchmarks).
    /// </summary>
    internal bool SeedOnEveryRow { get; init; }

    /// <summary>
    /// Candidates each k-means++ step draws, keeping the best (greedy k-means++); 0 means 2 + ⌊ln k⌋,
    /// 1 is plain k-means++ (for comparisons and benchmarks).
    /// </summary>
    internal int SeedCandidates { get; init; }

    /// <summary>When set, every assignment pass scores every row against every centroid (for comparisons and benchmarks).</summary>
    internal bool DisablePruning { get; init; }

    /// <summary>When set, bounds prune every assignment pass after the first, even below <see cref="PruningMinimumGroups"/> groups and while centroids still move far (for tests).</summary>
    internal bool ForcePruning { get; init; }

    /// <summary>
    /// Fewest groups at which assignment passes use bounds (see GroupAssignment). Measured with
    /// `bench … -- study FILE k 20 7 2 greedy-fromK,greedy-noprune` on the peers' S data (20k × 384), two threads,
    /// interleaved, twice: median process CPU 0.200–0.221 s pruned against 0.256–0.261 s unpruned at k = 32, and
    /// 0.145–0.154 s against 0.168–0.183 s at k = 16. (Before the near centroids had bounds of their own and late
    /// passes skipped the jumper product, pruning cost 5–14% at k = 32 and was used from k = 64.)
    /// </summary>
    internal const int PruningMinimumGroups = 16;

    /// <summary>Seeding sample rows per group (see SeedingPool); for comparisons and benchmarks.</summary>
    internal int SeedingSampleRowsPerGroup { get; init; } = SeedingPool.SampleRowsPerGroup;

    /// <summary>Fewest groups at which passes use bounds, for comparisons and benchmarks; see <see cref="PruningMinimumGroups"/>.</summary>
    internal int PruningFromGroups { get; init; } = PruningMinimumGroups;

    internal bool ResolvePruning() => !DisablePruning && (ForcePruning || GroupCount >= PruningFromGroups);

    internal int ResolveSeedCandidates() => SeedCandidates > 0 ? SeedCandidates : KMeansPlusPlusSeeding.DefaultCandidates(GroupCount);

    internal void Validate(int rows)
    {
        if (GroupCount < 1)
        {
            throw new ArgumentException($"GroupCount is {GroupCount}; it must be at least 1.", nameof(GroupCount));
        }

        if (GroupCount > rows)
        {
            throw new ArgumentException(
                $"GroupCount is {GroupCount} but there are only {rows} rows; ask for at most {rows} groups.",
                nameof(GroupCount));
        }

        if (RestartCount < 1)
        {
            throw new ArgumentException($"RestartCount is {RestartCount}; it must be at least 1.", nameof(RestartCount));
        }

        if (MaxIterations < 1)
        {
            throw new ArgumentException($"MaxIterations is {MaxIterations}; it must be at least 1.", nameof(MaxIterations));
        }

        if (MaxDegreeOfParallelism == 0 || MaxDegreeOfParallelism < -1)
        {
            throw new ArgumentException(
                $"MaxDegreeOfParallelism is {MaxDegreeOfParallelism}; use -1 for all cores or a positive thread count.",
                nameof(MaxDegreeOfParallelism));
        }

        if (MiniBatchSize < 0)
        {
            throw new ArgumentException(
                $"MiniBatchSize is {MiniBatchSize}; use 0 for full iterations or a positive number of rows per step.", nameof(MiniBatchSize));
        }

        if (!(ConvergenceTolerance >= 0))
        {
            throw new ArgumentException(
                $"ConvergenceTolerance is {ConvergenceTolerance}; it must be zero or positive.", nameof(ConvergenceTolerance));
        }
    }

    /// <summary>Threads to use: MaxDegreeOfParallelism, or every processor when it is -1.</summary>
    internal int ResolveWorkerCount() => MaxDegreeOfParallelism == -1 ? Environment.ProcessorCount : MaxDegreeOfParallelism;
}
