namespace TopicGroups.Core.Clustering;

/// <summary>Statistics of one refinement iteration: data, not log lines.</summary>
/// <param name="Objective">Mean cosine of each row to its assigned centroid after this iteration's update.</param>
/// <param name="ReassignedCount">Rows whose group changed in this iteration's assignment step.</param>
public readonly record struct IterationStats(int Iteration, double Objective, int ReassignedCount, TimeSpan Elapsed);

/// <summary>
/// What a progress callback hears: which restart and iteration, and the objective so far. For the Seeding
/// stage (Iteration 0) the objective is the mean cosine to the nearest seed over the rows seeding drew from
/// (every row, or the seeding sample of a large input).
/// </summary>
public readonly record struct ClusteringProgress(ClusteringStage Stage, int Restart, int Iteration, double Objective);

public enum ClusteringStage
{
    Seeding,
    Refining,
}

/// <summary>The kept run of a spherical k-means fit. Arrays are indexed by row or by group.</summary>
public sealed class ClusteringResult
{
    /// <summary>k × d, row-major, each row unit length.</summary>
    public required float[] Centroids { get; init; }

    public required int GroupCount { get; init; }

    public required int Dimensions { get; init; }

    /// <summary>Group of each row, 0 ≤ group &lt; GroupCount. No group is empty.</summary>
    public required int[] Assignments { get; init; }

    /// <summary>Cosine of each row to its own centroid.</summary>
    public required float[] Similarities { get; init; }

    /// <summary>The next-best group of each row (equal to its own group when k = 1).</summary>
    public required int[] RunnerUpGroups { get; init; }

    /// <summary>Cosine of each row to its runner-up centroid (equal to Similarities when k = 1).</summary>
    public required float[] RunnerUpSimilarities { get; init; }

    /// <summary>Mean cosine of each row to its assigned centroid (higher is better).</summary>
    public required double Objective { get; init; }

    public required int Iterations { get; init; }

    public required bool Converged { get; init; }

    /// <summary>Index of the restart that was kept.</summary>
    public required int KeptRestart { get; init; }

    public required int RestartCount { get; init; }

    /// <summary>Iterations of the kept run, in order.</summary>
    public required IReadOnlyList<IterationStats> IterationHistory { get; init; }

    /// <summary>Best objective of every restart, by restart index.</summary>
    public required IReadOnlyList<double> RestartObjectives { get; init; }

    /// <summary>Time spent seeding, summed over restarts.</summary>
    public required TimeSpan SeedingTime { get; init; }

    public required TimeSpan TotalTime { get; init; }
}
