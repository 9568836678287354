using System.Diagnostics;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Clustering;

/// <summary>
/// Spherical k-means (Dhillon &amp; Modha, 2001) on unit-length rows: assignment is the argmax of
/// cosine, each centroid is the normalised mean of its members.
/// </summary>
public static class SphericalKMeans
{
    /// <summary>
    /// Clusters unit-length rows. The rows must already be normalised (see RowNormalisation).
    /// Each restart seeds with k-means++ from its own generator (SplitMix64 stream r of Seed) and
    /// refines with Lloyd iterations; the restart with the highest objective is kept (the earliest on a tie).
    /// Above max(8192, 128 × GroupCount) rows the seeds are drawn from a uniform sample of that many rows
    /// (see SeedingPool); the iterations always use every row, except with MiniBatchSize (see MiniBatchRefinement).
    /// </summary>
    /// <exception cref="ArgumentException">An option is out of range; the message names it.</exception>
    /// <exception cref="OperationCanceledException">The token was cancelled (checked between iterations and between seeds).</exception>
    public static ClusteringResult Fit(
        EmbeddingMatrix unitRows,
        SphericalKMeansOptions options,
        Action<ClusteringProgress>? progress = null,
        CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(unitRows);
        ArgumentNullException.ThrowIfNull(options);
        options.Validate(unitRows.Rows);
        if (options.InitialCentroids is float[] initialCentroids && initialCentroids.Length != options.GroupCount * unitRows.Dimensions)
        {
            throw new ArgumentException(
                $"InitialCentroids has {initialCentroids.Length} values; give GroupCount × d = {options.GroupCount} × {unitRows.Dimensions} values.",
                nameof(options));
        }

        long fitStart = Stopwatch.GetTimestamp();
        int n = unitRows.Rows;
        int d = unitRows.Dimensions;
        int k = options.GroupCount;
        int seedCandidates = options.ResolveSeedCandidates();
        using var ws = new ClusteringWorkspace(unitRows, k, options.ResolveWorkerCount(), !options.SeedOnEveryRow, seedCandidates, options.ResolvePruning(), options.SeedingSampleRowsPerGroup);
        if (ws.Bounds is not null)
        {
            ws.Bounds.AlwaysPrune = options.ForcePruning;
        }


        // The kept run, copied out of the workspace whenever a restart beats it, except the last restart, whose
        // arrays are handed over as they are (no later run writes them): one restart copies nothing.
        float[] keptCentroids = [];
        int[] keptAssignments = [];
        float[] keptSimilarities = [];
        int[] keptRunnerUps = [];
        float[] keptRunnerUpSimilarities = [];
        IterationStats[] keptHistory = [];
        double keptObjective = double.NegativeInfinity;
        int keptRestart = -1;
        bool keptConverged = false;

        double[] restartObjectives = new double[options.RestartCount];
        long seedingTicks = 0;
        var history = new List<IterationStats>(options.MaxIterations);

        for (int restart = 0; restart < options.RestartCount; restart++)
        {
            cancellationToken.ThrowIfCancellationRequested();
            SplitMix64 random = SplitMix64.ForStream(options.Seed, restart);

            double previousObjective;
            if (restart == 0 && options.InitialCentroids is float[] initial)
            {
                // Warm start: the given centres replace the seeds; the first iteration is never judged against them.
                initial.CopyTo(ws.Centroids, 0);
                previousObjective = double.NegativeInfinity;
            }
            else
            {
                long seedingStart = Stopwatch.GetTimestamp();
                ws.Seeding.Draw(ref random);
                double seedingObjective = KMeansPlusPlusSeeding.Seed(ws.Seeding, ws.Centroids, k, seedCandidates, ref random, cancellationToken);
                seedingTicks += Stopwatch.GetTimestamp() - seedingStart;
                progress?.Invoke(new ClusteringProgress(ClusteringStage.Seeding, restart, 0, seedingObjective));

                // A sample's objective says nothing exact about all rows, so the first iteration is never judged against it.
                previousObjective = ws.Seeding.IsSampled ? double.NegativeInfinity : seedingObjective;
            }

            (double objective, bool converged) = options.MiniBatchSize > 0
                ? (MiniBatchRefinement.Refine(ws, options, restart, ref random, history, progress, cancellationToken), false)
                : Refine(ws, options, restart, previousObjective, history, progress, cancellationToken);
            restartObjectives[restart] = objective;

            if (objective > keptObjective)
            {
                keptObjective = objective;
                keptRestart = restart;
                keptConverged = converged;
                keptHistory = history.ToArray();
                bool last = restart == options.RestartCount - 1;
                keptCentroids = Keep(ws.Centroids, keptCentroids, last);
                keptAssignments = Keep(ws.Assignments, keptAssignments, last);
                keptSimilarities = Keep(ws.Similarities, keptSimilarities, last);
                keptRunnerUps = Keep(ws.RunnerUpGroups, keptRunnerUps, last);
                keptRunnerUpSimilarities = Keep(ws.RunnerUpSimilarities, keptRunnerUpSimilarities, last);
            }
        }

        return new ClusteringResult
        {
            Centroids = keptCentroids,
            GroupCount = k,
            Dimensions = d,
            Assignments = keptAssignments,
            Similarities = keptSimilarities,
            RunnerUpGroups = keptRunnerUps,
            RunnerUpSimilarities = keptRunnerUpSimilarities,
            Objective = keptObjective,
            Iterations = keptHistory.Length,
            Converged = keptConverged,
            KeptRestart = keptRestart,
            RestartCount = options.RestartCount,
            IterationHistory = keptHistory,
            RestartObjectives = restartObjectives,
            SeedingTime = Stopwatch.GetElapsedTime(0, seedingTicks),
            TotalTime = Stopwatch.GetElapsedTime(fitStart),
        };
    }

    /// <summary>The workspace's array itself after the last restart, else a copy (into the earlier copy when there is one).</summary>
    private static T[] Keep<T>(T[] workspace, T[] kept, bool last)
    {
        if (last)
        {
            return workspace;
        }

        if (kept.Length != workspace.Length)
        {
            kept = new T[workspace.Length];
        }

        workspace.CopyTo(kept, 0);
        return kept;
    }

    /// <summary>
    /// Lloyd iterations from the seeds in workspace.Centroids. On return the workspace holds this run's
    /// centroids, assignments (no group empty) and each row's cosine and runner-up for those centroids.
    /// </summary>
    private static (double Objective, bool Converged) Refine(
        ClusteringWorkspace ws,
        SphericalKMeansOptions options,
        int restart,
        double seedingObjective,
        List<IterationStats> history,
        Action<ClusteringProgress>? progress,
        CancellationToken cancellationToken)
    {
        history.Clear();
        Array.Fill(ws.Assignments, -1);
        if (ws.Bounds is not null)
        {
            ws.Bounds.Valid = false;
        }

        CentroidUpdate.Reset(ws);
        double previousObjective = seedingObjective;
        double objective = seedingObjective;
        bool converged = false;
        bool scoresAreCurrent = false;

        for (int iteration = 1; iteration <= options.MaxIterations; iteration++)
        {
            cancellationToken.ThrowIfCancellationRequested();
            long iterationStart = Stopwatch.GetTimestamp();

            (int reassigned, int scored) = GroupAssignment.AssignAll(ws);
            CentroidUpdate.CountSizes(ws);
            int repaired = EmptyGroupRepair.Repair(ws);
            objective = CentroidUpdate.Update(ws);

            history.Add(new IterationStats(iteration, objective, reassigned, Stopwatch.GetElapsedTime(iterationStart)));
            progress?.Invoke(new ClusteringProgress(ClusteringStage.Refining, restart, iteration, objective));

            // With no change and no repair the new centroids equal the ones just scored against, bit for
            // bit (same sums), so the recorded cosines are current if every row was scored (none pruned).
            scoresAreCurrent = reassigned == 0 && repaired == 0 && scored == ws.N;
            if (options.RunAllIterations)
            {
                previousObjective = objective;
                continue;
            }

            double relativeGain = double.IsFinite(previousObjective)
                ? (objective - previousObjective) / Math.Max(Math.Abs(previousObjective), double.Epsilon)
                : double.PositiveInfinity;
            previousObjective = objective;
            if ((reassigned == 0 && repaired == 0) || relativeGain < options.ConvergenceTolerance)
            {
                converged = true;
                break;
            }
        }

        if (!scoresAreCurrent)
        {
            GroupAssignment.ScoreAssigned(ws);
        }

        return (objective, converged);
    }
}
