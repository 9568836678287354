namespace TopicGroups.Core.Clustering;

/// <summary>Named defaults of the group-count search, quoted in docs/algorithms.md and the proto comments.</summary>
public static class GroupCountSearchDefaults
{
    /// <summary>The default range is 2 to min(40, ⌊√(n / 2)⌋) groups (at least 2, at most n − 1).</summary>
    public const int DefaultMinimum = 2;

    /// <summary>The largest upper end of the default range.</summary>
    public const int DefaultMaximumCap = 40;

    /// <summary>Rows whose silhouettes are averaged for each candidate and for the final quality figures.</summary>
    public const int SilhouetteSampleSize = 5_000;

    /// <summary>Candidates are clustered on a seeded subset of at most this many rows (all rows when fewer).</summary>
    public const int CandidateRowLimit = 25_000;

    /// <summary>Restarts per candidate; the final grouping at the chosen count uses the caller's own settings.</summary>
    public const int CandidateRestartCount = 1;

    /// <summary>Iterations per candidate at most.</summary>
    public const int CandidateMaxIterations = 20;

    /// <summary>
    /// Split-merge moves per candidate at most (<see cref="SplitMergeRefinement"/>): each moves the least useful centre
    /// into the group whose split gains most and keeps the move only when the objective rises.
    /// </summary>
    public const int CandidateMoveLimit = 16;

    /// <summary>Groups tried, largest split gain first, before a candidate's moves stop.</summary>
    public const int CandidateMoveAttempts = 3;

    /// <summary>A candidate run stops when an iteration raises the objective by less than this fraction.</summary>
    public const double CandidateConvergenceTolerance = 1e-4;

    /// <summary>Points of the first, coarse pass over the range (geometric spacing); the search then refines.</summary>
    public const int CoarsePoints = 8;

    /// <summary>
    /// The lowest best mean silhouette that counts as structure is max(0.05, 3 / d), capped at 0.5: uniformly
    /// random unit vectors, which have no groups at all, reach about 1.5 / d (measured; docs/algorithms.md §8).
    /// </summary>
    public const double NoStructureFloor = 0.05;

    /// <summary>The d-scaled part of the no-structure threshold: 3 / d.</summary>
    public const double NoStructurePerDimension = 3.0;

    /// <summary>The cap on the no-structure threshold for very low dimensions.</summary>
    public const double NoStructureCap = 0.5;
}

/// <summary>How <see cref="GroupCountSearch"/> chooses the number of groups.</summary>
public sealed record GroupCountSearchOptions
{
    /// <summary>Smallest count to consider; 0 = the default range's (2).</summary>
    public int MinimumGroupCount { get; init; }

    /// <summary>Largest count to consider; 0 = the default range's, min(40, ⌊√(n / 2)⌋).</summary>
    public int MaximumGroupCount { get; init; }

    /// <value>The default is 0. The same seed gives the same curve for any thread count.</value>
    public ulong Seed { get; init; } = SphericalKMeansDefaults.Seed;

    /// <value>The default is 5,000 rows; every row when the batch is no larger (the silhouette is then exact).</value>
    public int SilhouetteSampleSize { get; init; } = GroupCountSearchDefaults.SilhouetteSampleSize;

    /// <value>The default is 25,000 rows.</value>
    public int CandidateRowLimit { get; init; } = GroupCountSearchDefaults.CandidateRowLimit;

    /// <value>The default is 1 restart per candidate.</value>
    public int CandidateRestartCount { get; init; } = GroupCountSearchDefaults.CandidateRestartCount;

    /// <value>The default is 20 iterations per candidate.</value>
    public int CandidateMaxIterations { get; init; } = GroupCountSearchDefaults.CandidateMaxIterations;

    /// <value>The default is 16 moves; 0 turns the moves off (plain k-means++ and Lloyd, which merges small groups).</value>
    public int CandidateMoveLimit { get; init; } = GroupCountSearchDefaults.CandidateMoveLimit;

    /// <summary>Groups tried per move, largest split gain first (internal: for measurements).</summary>
    internal int CandidateMoveAttempts { get; init; } = GroupCountSearchDefaults.CandidateMoveAttempts;

    /// <value>The default is 1e-4.</value>
    public double CandidateConvergenceTolerance { get; init; } = GroupCountSearchDefaults.CandidateConvergenceTolerance;

    /// <summary>
    /// Counts whose mean silhouette is within this of the best count's tie, and the fewest groups among them win.
    /// </summary>
    /// <value>The default is null: one standard error of the best count's sampled mean silhouette (the one-standard-error rule).</value>
    public double? TieTolerance { get; init; }

    /// <value>The default is -1: all cores. Results do not depend on it.</value>
    public int MaxDegreeOfParallelism { get; init; } = -1;

    /// <summary>
    /// The range searched when the caller gives none: 2 to min(40, ⌊√(n / 2)⌋), at least 2 and at most n − 1
    /// (a silhouette needs a neighbour group and at least one group of two). For 681 rows that is 2–18; from
    /// 3,200 rows on it is 2–40.
    /// </summary>
    public static (int Minimum, int Maximum) DefaultRange(int rows)
    {
        if (rows < 3)
        {
            throw new ArgumentException($"There are {rows} rows; choosing a group count needs at least 3.", nameof(rows));
        }

        int maximum = (int)Math.Floor(Math.Sqrt(rows / 2.0));
        maximum = Math.Clamp(maximum, GroupCountSearchDefaults.DefaultMinimum, GroupCountSearchDefaults.DefaultMaximumCap);
        return (GroupCountSearchDefaults.DefaultMinimum, Math.Min(maximum, rows - 1));
    }

    /// <summary>The no-structure threshold for d dimensions: max(0.05, 3 / d), at most 0.5.</summary>
    public static double NoStructureThreshold(int dimensions) =>
        Math.Min(
            GroupCountSearchDefaults.NoStructureCap,
            Math.Max(GroupCountSearchDefaults.NoStructureFloor, GroupCountSearchDefaults.NoStructurePerDimension / Math.Max(1, dimensions)));

    /// <summary>The range to search for <paramref name="rows"/> rows; throws when the given bounds cannot work.</summary>
    internal (int Minimum, int Maximum) ResolveRange(int rows)
    {
        if (rows < 3)
        {
            throw new ArgumentException(
                $"There are {rows} rows; choosing a group count needs at least 3. Give a fixed GroupCount instead.", nameof(rows));
        }

        (int defaultMinimum, int defaultMaximum) = DefaultRange(rows);
        int minimum = MinimumGroupCount == 0 ? defaultMinimum : MinimumGroupCount;
        int maximum = MaximumGroupCount == 0 ? Math.Max(defaultMaximum, minimum) : MaximumGroupCount;
        if (minimum < 2)
        {
            throw new ArgumentException(
                $"MinimumGroupCount is {minimum}; it must be at least 2 (a silhouette compares each group with its nearest neighbour).",
                nameof(MinimumGroupCount));
        }

        if (maximum < minimum)
        {
            throw new ArgumentException(
                $"MaximumGroupCount ({maximum}) is below MinimumGroupCount ({minimum}); give a range with minimum ≤ maximum.",
                nameof(MaximumGroupCount));
        }

        if (maximum > rows - 1)
        {
            throw new ArgumentException(
                $"MaximumGroupCount is {maximum} but there are {rows} rows; the silhouette needs at most n − 1 = {rows - 1} groups.",
                nameof(MaximumGroupCount));
        }

        return (minimum, maximum);
    }

    internal void Validate()
    {
        if (SilhouetteSampleSize < 2)
        {
            throw new ArgumentException($"SilhouetteSampleSize is {SilhouetteSampleSize}; it must be at least 2.", nameof(SilhouetteSampleSize));
        }

        if (CandidateRowLimit < 3)
        {
            throw new ArgumentException($"CandidateRowLimit is {CandidateRowLimit}; it must be at least 3.", nameof(CandidateRowLimit));
        }

        if (CandidateRestartCount < 1 || CandidateMaxIterations < 1)
        {
            throw new ArgumentException(
                $"CandidateRestartCount ({CandidateRestartCount}) and CandidateMaxIterations ({CandidateMaxIterations}) must be at least 1.",
                nameof(CandidateRestartCount));
        }

        if (CandidateMoveLimit < 0)
        {
            throw new ArgumentException($"CandidateMoveLimit is {CandidateMoveLimit}; it must be zero (no moves) or positive.", nameof(CandidateMoveLimit));
        }

        if (TieTolerance is double tieTolerance && !(tieTolerance >= 0) || !(CandidateConvergenceTolerance >= 0))
        {
            throw new ArgumentException(
                $"TieTolerance ({TieTolerance}) and CandidateConvergenceTolerance ({CandidateConvergenceTolerance}) must be zero or positive.",
                nameof(TieTolerance));
        }

        if (MaxDegreeOfParallelism == 0 || MaxDegreeOfParallelism < -1)
        {
            throw new ArgumentException(
                $"MaxDegreeOfParallelism is {MaxDegreeOfParallelism}; use -1 for all cores or a positive thread count.",
                nameof(MaxDegreeOfParallelism));
        }
    }

    internal int ResolveWorkerCount() => MaxDegreeOfParallelism == -1 ? Environment.ProcessorCount : MaxDegreeOfParallelism;
}
