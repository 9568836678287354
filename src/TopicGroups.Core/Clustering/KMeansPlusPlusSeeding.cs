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
    /// Writes k seeds (copies of pool rows) into <paramref name="centroids"/> (k × d). Returns the mean
    /// cosine of each pool row to its nearest seed. Deterministic for a generator state and any thread
    /// count: the weights are summed per block and the draw walks blocks in order.
    /// </summary>
    public static double Seed(SeedingPool pool, float[] centroids, int k, ref SplitMix64 random, CancellationToken cancellationToken)
    {
        int n = pool.N;
        Array.Clear(pool.IsSeed);
        Array.Fill(pool.MinDistance, float.PositiveInfinity);

        int first = random.NextInt(n);
        TakeSeed(pool, centroids, 0, first);
        double total = UpdateDistances(pool, centroids, 0);
        for (int c = 1; c < k; c++)
        {
            cancellationToken.ThrowIfCancellationRequested();
            int chosen = total > 0 ? DrawWeighted(pool, random.NextDouble() * total) : DrawUnchosen(pool, ref random, c);
            TakeSeed(pool, centroids, c, chosen);
            total = UpdateDistances(pool, centroids, c);
        }

        // Σ (1 − D) / n = mean cosine to the nearest seed.
        return (n - total) / n;
    }

    private static void TakeSeed(SeedingPool pool, float[] centroids, int seedIndex, int row)
    {
        pool.IsSeed[row] = true;
        pool.Row(row).CopyTo(centroids.AsSpan(seedIndex * pool.D, pool.D));
    }

    /// <summary>Lowers each row's distance with seed <paramref name="seedIndex"/>; returns Σ distances, reduced in block order.</summary>
    private static double UpdateDistances(SeedingPool pool, float[] centroids, int seedIndex)
    {
        RowBlocks blocks = pool.Blocks;
        blocks.ForEachBlock((block, _) => UpdateBlock(pool, centroids, seedIndex, block));
        double total = 0;
        for (int block = 0; block < blocks.Count; block++)
        {
            total += pool.BlockWeight[block];
        }

        return total;
    }

    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static void UpdateBlock(SeedingPool pool, float[] centroids, int seedIndex, int block)
    {
        int d = pool.D;
        float[] minDistance = pool.MinDistance;
        ReadOnlySpan<float> seed = centroids.AsSpan(seedIndex * d, d);
        int start = pool.Blocks.Start(block);
        int end = start + pool.Blocks.Length(block);
        double sum = 0;
        for (int i = start; i < end; i++)
        {
            // Clamped at 0: rounding can put a cosine a hair above 1.
            float distance = MathF.Max(0f, 1f - TensorPrimitives.Dot(pool.Row(i), seed));
            if (distance < minDistance[i])
            {
                minDistance[i] = distance;
            }

            sum += minDistance[i];
        }

        pool.BlockWeight[block] = sum;
    }

    /// <summary>The first row whose cumulative weight exceeds <paramref name="target"/>; a chosen seed has weight 0 and is never drawn.</summary>
    private static int DrawWeighted(SeedingPool pool, double target)
    {
        RowBlocks blocks = pool.Blocks;
        double[] partial = pool.BlockWeight;
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
                float weight = pool.MinDistance[i];
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
            if (pool.MinDistance[i] > 0f)
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
    private static int DrawUnchosen(SeedingPool pool, ref SplitMix64 random, int seedsSoFar)
    {
        int target = random.NextInt(pool.N - seedsSoFar);
        for (int i = 0; i < pool.N; i++)
        {
            if (pool.IsSeed[i])
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
