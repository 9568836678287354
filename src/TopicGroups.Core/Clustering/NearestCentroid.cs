using System.Runtime.CompilerServices;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Clustering;

/// <summary>
/// Places rows with their most similar centroid, given centroids from anywhere (a fit, a saved grouping,
/// another library). Scoring a clustering this way, with a final reassignment, rates any method by the
/// same rule: the objective is the mean over rows of the best cosine to any centroid.
/// </summary>
public static class NearestCentroid
{
    /// <summary>
    /// For every unit row, the index of the most similar centroid (ties go to the lower index) and that
    /// cosine; returns the mean cosine, summed in float64 in fixed row blocks so that it does not depend on
    /// the thread count. Centroids must be unit length (k × d, row-major) for the scores to be cosines.
    /// </summary>
    /// <param name="unitRows">Rows already scaled to unit length.</param>
    /// <param name="unitCentroids">k × d, row-major.</param>
    /// <param name="assignments">Optional, length n: receives each row's centroid index.</param>
    /// <param name="similarities">Optional, length n: receives each row's best cosine.</param>
    /// <param name="maxDegreeOfParallelism">-1 for all cores, or a positive thread count.</param>
    /// <exception cref="ArgumentException">A shape does not match; the message names the argument.</exception>
    public static double Assign(
        EmbeddingMatrix unitRows,
        float[] unitCentroids,
        int[]? assignments = null,
        float[]? similarities = null,
        int maxDegreeOfParallelism = -1)
    {
        ArgumentNullException.ThrowIfNull(unitRows);
        ArgumentNullException.ThrowIfNull(unitCentroids);
        int n = unitRows.Rows;
        int d = unitRows.Dimensions;
        if (unitCentroids.Length == 0 || unitCentroids.Length % d != 0)
        {
            throw new ArgumentException(
                $"unitCentroids has {unitCentroids.Length} values; give k × {d} values (k ≥ 1), one centroid per row.", nameof(unitCentroids));
        }

        if (assignments is not null && assignments.Length != n)
        {
            throw new ArgumentException($"assignments has {assignments.Length} slots for {n} rows.", nameof(assignments));
        }

        if (similarities is not null && similarities.Length != n)
        {
            throw new ArgumentException($"similarities has {similarities.Length} slots for {n} rows.", nameof(similarities));
        }

        if (maxDegreeOfParallelism == 0 || maxDegreeOfParallelism < -1)
        {
            throw new ArgumentException(
                $"maxDegreeOfParallelism is {maxDegreeOfParallelism}; use -1 for all cores or a positive thread count.", nameof(maxDegreeOfParallelism));
        }

        if (n == 0)
        {
            return double.NaN;
        }

        int k = unitCentroids.Length / d;
        int workers = maxDegreeOfParallelism == -1 ? Environment.ProcessorCount : maxDegreeOfParallelism;
        var blocks = new RowBlocks(n, workers);
        using var panel = new CentroidPanel(k, d);
        panel.Pack(unitCentroids);
        float[][] scratch = new float[Math.Min(workers, blocks.Count)][];
        double[] blockSums = new double[blocks.Count];
        float[] rows = unitRows.Values;

        blocks.ForEachBlock((block, worker) =>
        {
            float[] scores = scratch[worker] ??= new float[RowBlocks.BlockRows * k];
            blockSums[block] = AssignBlock(rows, d, k, panel, blocks.Start(block), blocks.Length(block), scores, assignments, similarities);
        });

        double total = 0;
        foreach (double blockSum in blockSums)
        {
            total += blockSum;
        }

        return total / n;
    }

    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static double AssignBlock(
        float[] rows, int d, int k, CentroidPanel panel, int start, int length, float[] scores, int[]? assignments, float[]? similarities)
    {
        BlockScores.Compute(rows.AsSpan(start * d, length * d), panel, scores, k);
        double sum = 0;
        for (int r = 0; r < length; r++)
        {
            ReadOnlySpan<float> rowScores = scores.AsSpan(r * k, k);
            int best = 0;
            float bestScore = rowScores[0];
            for (int j = 1; j < k; j++)
            {
                if (rowScores[j] > bestScore)
                {
                    best = j;
                    bestScore = rowScores[j];
                }
            }

            if (assignments is not null)
            {
                assignments[start + r] = best;
            }

            if (similarities is not null)
            {
                similarities[start + r] = bestScore;
            }

            sum += bestScore;
        }

        return sum;
    }
}
