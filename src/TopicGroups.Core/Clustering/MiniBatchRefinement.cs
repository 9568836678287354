using System.Diagnostics;
using System.Runtime.CompilerServices;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Clustering;

/// <summary>
/// Refinement by mini-batches (Sculley, 2010, "Web-scale k-means clustering", Algorithm 1) on the sphere: each
/// step draws MiniBatchSize rows, assigns them to their most similar centroid, then moves each centroid toward its
/// new members one row at a time with rate 1 / (rows it has taken so far), and renormalises it. The seed counts as
/// the centroid's first row. After the last step one full assignment pass, empty-group repair and an exact update
/// (normalised means of the members) make the result a proper spherical k-means state, so it is described like a
/// Lloyd run's.
/// </summary>
/// <remarks>
/// Cost per step: b rows × k centroids products instead of n × k, so MaxIterations steps of b rows cost about
/// MaxIterations × b / n full passes. Deterministic for a seed and any thread count: the batch comes from the
/// restart's generator, is scored in fixed blocks, and the centroids move in the batch's (ascending row) order.
/// </remarks>
internal static class MiniBatchRefinement
{
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public static double Refine(
        ClusteringWorkspace ws,
        SphericalKMeansOptions options,
        int restart,
        ref SplitMix64 random,
        List<IterationStats> history,
        Action<ClusteringProgress>? progress,
        CancellationToken cancellationToken)
    {
        int n = ws.N;
        int d = ws.D;
        int k = ws.K;
        int batchSize = Math.Min(options.MiniBatchSize, n);
        history.Clear();
        Array.Fill(ws.Assignments, -1);
        if (ws.Bounds is not null)
        {
            ws.Bounds.Valid = false;
        }

        // Running means in float64 (the sums' storage), counts per centroid; the seeds count once.
        double[] means = ws.Sums;
        long[] taken = new long[k];
        for (int c = 0; c < k; c++)
        {
            ReadOnlySpan<float> seed = ws.Centroid(c);
            for (int p = 0; p < d; p++)
            {
                means[c * d + p] = seed[p];
            }

            taken[c] = 1;
        }

        int[] permutation = new int[n];
        for (int i = 0; i < n; i++)
        {
            permutation[i] = i;
        }

        int[] batch = new int[batchSize];
        var batchBlocks = new RowBlocks(batchSize, ws.Blocks.WorkerCount);
        float[][] gathered = new float[ws.Blocks.WorkerCount][];
        int[] blockChanged = new int[batchBlocks.Count];
        double[] blockScore = new double[batchBlocks.Count];
        int[] batchGroup = new int[batchSize];
        float[] batchSimilarity = new float[batchSize];

        for (int step = 1; step <= options.MaxIterations; step++)
        {
            cancellationToken.ThrowIfCancellationRequested();
            long stepStart = Stopwatch.GetTimestamp();

            // b rows without replacement: a partial Fisher–Yates shuffle of the running permutation, then
            // ascending so the gather reads the matrix front to back.
            for (int t = 0; t < batchSize; t++)
            {
                int j = t + random.NextInt(n - t);
                (permutation[t], permutation[j]) = (permutation[j], permutation[t]);
            }

            permutation.AsSpan(0, batchSize).CopyTo(batch);
            Array.Sort(batch);

            ws.Panel.Pack(ws.Centroids);
            batchBlocks.ForEachBlock((block, worker) =>
                (blockChanged[block], blockScore[block]) = AssignBatchBlock(
                    ws, batch, batchBlocks.Start(block), batchBlocks.Length(block), gathered[worker] ??= new float[RowBlocks.BlockRows * d],
                    ws.BlockScratch[worker], batchGroup, batchSimilarity));

            int reassigned = 0;
            double batchObjective = 0;
            for (int block = 0; block < batchBlocks.Count; block++)
            {
                reassigned += blockChanged[block];
                batchObjective += blockScore[block];
            }

            // Sculley's per-centre rate: each row pulls its centroid by 1 / (rows taken so far).
            for (int b = 0; b < batchSize; b++)
            {
                int c = batchGroup[b];
                ws.Assignments[batch[b]] = c;
                taken[c]++;
                double rate = 1.0 / taken[c];
                ReadOnlySpan<float> row = ws.Row(batch[b]);
                Span<double> mean = means.AsSpan(c * d, d);
                for (int p = 0; p < d; p++)
                {
                    mean[p] += (row[p] - mean[p]) * rate;
                }
            }

            for (int c = 0; c < k; c++)
            {
                NormaliseInto(means.AsSpan(c * d, d), ws.Centroid(c));
            }

            batchObjective /= batchSize;
            history.Add(new IterationStats(step, batchObjective, reassigned, Stopwatch.GetElapsedTime(stepStart)));
            progress?.Invoke(new ClusteringProgress(ClusteringStage.Refining, restart, step, batchObjective));
        }

        // One full pass so every row has a group, then exact centroids of those groups.
        cancellationToken.ThrowIfCancellationRequested();
        Array.Fill(ws.Assignments, -1);
        CentroidUpdate.Reset(ws);
        GroupAssignment.AssignAll(ws);
        CentroidUpdate.CountSizes(ws);
        EmptyGroupRepair.Repair(ws);
        double objective = CentroidUpdate.Update(ws);
        GroupAssignment.ScoreAssigned(ws);
        return objective;
    }

    /// <summary>Gathers batch rows start..start+length, scores them, records each one's best group; returns (changed, Σ best cosine).</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static (int Changed, double Sum) AssignBatchBlock(
        ClusteringWorkspace ws, int[] batch, int start, int length, float[] rows, float[] scratch, int[] batchGroup, float[] batchSimilarity)
    {
        int d = ws.D;
        int k = ws.K;
        for (int r = 0; r < length; r++)
        {
            ws.Row(batch[start + r]).CopyTo(rows.AsSpan(r * d, d));
        }

        Span<float> scores = scratch.AsSpan(0, length * k);
        BlockScores.Compute(rows.AsSpan(0, length * d), ws.Panel, scores, k);
        int changed = 0;
        double sum = 0;
        for (int r = 0; r < length; r++)
        {
            ReadOnlySpan<float> rowScores = scores.Slice(r * k, k);
            int best = 0;
            for (int j = 1; j < k; j++)
            {
                if (rowScores[j] > rowScores[best])
                {
                    best = j;
                }
            }

            batchGroup[start + r] = best;
            batchSimilarity[start + r] = rowScores[best];
            changed += ws.Assignments[batch[start + r]] != best ? 1 : 0;
            sum += rowScores[best];
        }

        return (changed, sum);
    }

    /// <summary>target = mean / ‖mean‖; a mean of exactly zero (members that cancel) leaves the centroid where it was.</summary>
    private static void NormaliseInto(ReadOnlySpan<double> mean, Span<float> target)
    {
        double squared = 0;
        foreach (double value in mean)
        {
            squared += value * value;
        }

        if (!(squared > 0))
        {
            return;
        }

        double scale = 1.0 / Math.Sqrt(squared);
        for (int p = 0; p < mean.Length; p++)
        {
            target[p] = (float)(mean[p] * scale);
        }
    }
}
