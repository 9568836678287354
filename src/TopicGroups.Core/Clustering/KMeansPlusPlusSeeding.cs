using System.Runtime.CompilerServices;
using System.Numerics.Tensors;

namespace TopicGroups.Core.Clustering;

/// <summary>
/// k-means++ seeding (Arthur &amp; Vassilvitskii, 2007) with the distance D(x) = 1 − max cos(x, seed).
/// For unit vectors ‖x − c‖² = 2(1 − cos), so drawing each next seed with probability proportional
/// to D(x) is exactly the paper's D² weighting on the sphere.
/// </summary>
internal static class KMeansPlusPlusSeeding
{
    /// <summary>
    /// Writes k seeds (copies of rows) into workspace.Centroids. Returns the seeding objective: the
    /// mean cosine of each row to its nearest seed. Deterministic for a generator state and any thread
    /// count: the weights are summed per block and the draw walks blocks in order.
    /// </summary>
    public static double Seed(ClusteringWorkspace ws, ref SplitMix64 random, CancellationToken cancellationToken)
    {
        int n = ws.N;
        Array.Clear(ws.IsSeed);
        Array.Fill(ws.MinDistance, float.PositiveInfinity);

        int first = random.NextInt(n);
        TakeSeed(ws, 0, first);
        double total = UpdateDistances(ws, 0);
        for (int c = 1; c < ws.K; c++)
        {
            cancellationToken.ThrowIfCancellationRequested();
            int chosen = total > 0 ? DrawWeighted(ws, random.NextDouble() * total) : DrawUnchosen(ws, ref random, c);
            TakeSeed(ws, c, chosen);
            total = UpdateDistances(ws, c);
        }

        // Σ (1 − D) / n = mean cosine to the nearest seed.
        return (n - total) / n;
    }

    private static void TakeSeed(ClusteringWorkspace ws, int seedIndex, int row)
    {
        ws.IsSeed[row] = true;
        ws.Row(row).CopyTo(ws.Centroid(seedIndex));
    }

    /// <summary>Lowers each row's distance with seed <paramref name="seedIndex"/>; returns Σ distances, reduced in block order.</summary>
    private static double UpdateDistances(ClusteringWorkspace ws, int seedIndex)
    {
        RowBlocks blocks = ws.Blocks;
        blocks.ForEachBlock((block, _) => UpdateBlock(ws, seedIndex, block));
        double total = 0;
        for (int block = 0; block < blocks.Count; block++)
        {
            total += ws.BlockObjective[block];
        }

        return total;
    }

    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static void UpdateBlock(ClusteringWorkspace ws, int seedIndex, int block)
    {
        int d = ws.D;
        float[] minDistance = ws.MinDistance;
        ReadOnlySpan<float> seed = ws.Centroids.AsSpan(seedIndex * d, d);
        int start = ws.Blocks.Start(block);
        int end = start + ws.Blocks.Length(block);
        double sum = 0;
        for (int i = start; i < end; i++)
        {
            // Clamped at 0: rounding can put a cosine a hair above 1.
            float distance = MathF.Max(0f, 1f - TensorPrimitives.Dot(ws.Row(i), seed));
            if (distance < minDistance[i])
            {
                minDistance[i] = distance;
            }

            sum += minDistance[i];
        }

        ws.BlockObjective[block] = sum;
    }

    /// <summary>The first row whose cumulative weight exceeds <paramref name="target"/>; a chosen seed has weight 0 and is never drawn.</summary>
    private static int DrawWeighted(ClusteringWorkspace ws, double target)
    {
        RowBlocks blocks = ws.Blocks;
        double[] partial = ws.BlockObjective;
        double cumulative = 0;
        int lastPositive = -1;
        for (int block = 0; block < blocks.Count; block++)
        {
            if (partial[block] > 0)
            {
                lastPositive = block;
            }

            if (cumulative + partial[block] <= target)
            {
                cumulative += partial[block];
                continue;
            }

            int start = blocks.Start(block);
            int end = start + blocks.Length(block);
            int lastInBlock = -1;
            for (int i = start; i < end; i++)
            {
                float weight = ws.MinDistance[i];
                if (weight <= 0f)
                {
                    continue;
                }

                lastInBlock = i;
                cumulative += weight;
                if (cumulative > target)
                {
                    return i;
                }
            }

            // Rounding left the target just past this block's own sum: its last weighted row.
            if (lastInBlock >= 0)
            {
                return lastInBlock;
            }
        }

        // Rounding left the target past the grand total: the last row with weight.
        int from = blocks.Start(lastPositive);
        for (int i = from + blocks.Length(lastPositive) - 1; i >= from; i--)
        {
            if (ws.MinDistance[i] > 0f)
            {
                return i;
            }
        }

        throw new InvalidOperationException("k-means++ found a positive total weight but no weighted row.");
    }

    /// <summary>
    /// Every row coincides with a seed (fewer distinct rows than groups): a uniform draw among the rows
    /// not yet taken, so seeds stay distinct rows and every group starts with a member.
    /// </summary>
    private static int DrawUnchosen(ClusteringWorkspace ws, ref SplitMix64 random, int seedsSoFar)
    {
        int target = random.NextInt(ws.N - seedsSoFar);
        for (int i = 0; i < ws.N; i++)
        {
            if (ws.IsSeed[i])
            {
                continue;
            }

            if (target-- == 0)
            {
                return i;
            }
        }

        throw new InvalidOperationException("k-means++ ran out of rows; GroupCount must not exceed the row count.");
    }
}
