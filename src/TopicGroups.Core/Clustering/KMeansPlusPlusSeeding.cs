using System.Runtime.CompilerServices;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Clustering;

/// <summary>
/// k-means++ seeding (Arthur &amp; Vassilvitskii, 2007) with the distance D(x) = 1 − max cos(x, seed).
/// For unit vectors ‖x − c‖² = 2(1 − cos), so drawing each next seed with probability proportional
/// to D(x) is exactly the paper's D² weighting on the sphere.
/// </summary>
/// <remarks>
/// Greedy form: each step draws several candidates from that distribution and keeps the one that lowers
/// Σ D(x) the most (the greedy variant; 2 + ⌊ln k⌋ candidates is scikit-learn's default, quoted from
/// memory of its documentation, and Grunau et al., 2023, analyse the method). The candidates are scored
/// against every pool row in one blocked product (<see cref="BlockScores"/>), so a step costs one pass over
/// the pool at the kernel's speed rather than one memory-bound dot product per row and candidate.
/// </remarks>
internal static class KMeansPlusPlusSeeding
{
    /// <summary>Candidates per step for k groups: 2 + ⌊ln k⌋ (1 when k = 1).</summary>
    public static int DefaultCandidates(int k) => k <= 1 ? 1 : 2 + (int)Math.Log(k);

    /// <summary>
    /// Writes k seeds (copies of pool rows) into <paramref name="centroids"/> (k × d). Returns the mean
    /// cosine of each pool row to its nearest seed. Deterministic for a generator state and any thread
    /// count: the weights are summed per block and the draw walks blocks in order.
    /// </summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public static double Seed(SeedingPool pool, float[] centroids, int k, int candidatesPerStep, ref SplitMix64 random, CancellationToken cancellationToken)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(candidatesPerStep, 1);
        ArgumentOutOfRangeException.ThrowIfGreaterThan(candidatesPerStep, pool.MaxCandidates);
        int n = pool.N;
        Array.Clear(pool.IsSeed);
        Array.Fill(pool.MinDistance, float.PositiveInfinity);

        int first = random.NextInt(n);
        TakeSeed(pool, centroids, 0, first);
        double total = UpdateDistances(pool, centroids, 0);
        for (int c = 1; c < k; c++)
        {
            cancellationToken.ThrowIfCancellationRequested();
            if (!(total > 0))
            {
                int unchosen = DrawUnchosen(pool, ref random, c);
                TakeSeed(pool, centroids, c, unchosen);
                total = UpdateDistances(pool, centroids, c);
            }
            else if (candidatesPerStep == 1)
            {
                int chosen = DrawWeighted(pool, random.NextDouble() * total);
                TakeSeed(pool, centroids, c, chosen);
                total = UpdateDistances(pool, centroids, c);
            }
            else
            {
                total = GreedyStep(pool, centroids, c, candidatesPerStep, total, ref random);
            }
        }

        // Σ (1 − D) / n = mean cosine to the nearest seed.
        return (n - total) / n;
    }

    /// <summary>
    /// Draws <paramref name="candidates"/> rows with probability ∝ D, scores the pool against all of them at
    /// once, keeps the candidate with the lowest Σ min(D, 1 − cos) (ties: the earlier draw) as seed
    /// <paramref name="seedIndex"/>, and returns the new Σ D (reduced in block order).
    /// </summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static double GreedyStep(SeedingPool pool, float[] centroids, int seedIndex, int candidates, double total, ref SplitMix64 random)
    {
        int d = pool.D;
        int[] drawn = pool.CandidateRows;
        float[] candidateValues = pool.CandidateValues;
        for (int l = 0; l < candidates; l++)
        {
            drawn[l] = DrawWeighted(pool, random.NextDouble() * total);
            pool.Row(drawn[l]).CopyTo(candidateValues.AsSpan(l * d, d));
        }

        CentroidPanel panel = pool.CandidatePanel(candidates);
        panel.Pack(candidateValues.AsSpan(0, candidates * d));
        RowBlocks blocks = pool.Blocks;
        blocks.ForEachBlock((block, _) => ScoreCandidatesBlock(pool, panel, candidates, block));

        int best = 0;
        double bestPotential = double.PositiveInfinity;
        for (int l = 0; l < candidates; l++)
        {
            double potential = 0;
            for (int block = 0; block < blocks.Count; block++)
            {
                potential += pool.BlockCandidateWeight[block * pool.MaxCandidates + l];
            }

            if (potential < bestPotential)
            {
                best = l;
                bestPotential = potential;
            }
        }

        TakeSeed(pool, centroids, seedIndex, drawn[best]);
        blocks.ForEachBlock((block, _) => KeepCandidateBlock(pool, candidates, best, block));
        double newTotal = 0;
        for (int block = 0; block < blocks.Count; block++)
        {
            newTotal += pool.BlockWeight[block];
        }

        return newTotal;
    }

    /// <summary>Scores one block of pool rows against the candidates and sums, per candidate, the distances it would leave.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static void ScoreCandidatesBlock(SeedingPool pool, CentroidPanel panel, int candidates, int block)
    {
        int d = pool.D;
        int start = pool.Blocks.Start(block);
        int length = pool.Blocks.Length(block);
        Span<float> scores = pool.CandidateScores.AsSpan(start * candidates, length * candidates);
        BlockScores.Compute(pool.Rows.AsSpan(start * d, length * d), panel, scores, candidates);

        Span<double> sums = pool.BlockCandidateWeight.AsSpan(block * pool.MaxCandidates, candidates);
        sums.Clear();
        float[] minDistance = pool.MinDistance;
        for (int r = 0; r < length; r++)
        {
            float current = minDistance[start + r];
            for (int l = 0; l < candidates; l++)
            {
                sums[l] += MathF.Min(current, MathF.Max(0f, 1f - scores[r * candidates + l]));
            }
        }
    }

    /// <summary>Lowers each row's distance with the kept candidate; a seed's own distance is exactly 0.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static void KeepCandidateBlock(SeedingPool pool, int candidates, int kept, int block)
    {
        int start = pool.Blocks.Start(block);
        int end = start + pool.Blocks.Length(block);
        float[] minDistance = pool.MinDistance;
        float[] scores = pool.CandidateScores;
        double sum = 0;
        for (int i = start; i < end; i++)
        {
            float distance = pool.IsSeed[i] ? 0f : MathF.Max(0f, 1f - scores[i * candidates + kept]);
            if (distance < minDistance[i])
            {
                minDistance[i] = distance;
            }

            sum += minDistance[i];
        }

        pool.BlockWeight[block] = sum;
    }

    private static void TakeSeed(SeedingPool pool, float[] centroids, int seedIndex, int row)
    {
        pool.IsSeed[row] = true;
        pool.Row(row).CopyTo(centroids.AsSpan(seedIndex * pool.D, pool.D));
    }

    /// <summary>Lowers each row's distance with seed <paramref name="seedIndex"/>; returns Σ distances, reduced in block order.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
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
            // Clamped at 0: rounding can put a cosine a hair above 1. A seed's own distance is exactly 0, so it is never drawn again.
            float distance = pool.IsSeed[i] ? 0f : MathF.Max(0f, 1f - DotProduct.Dot(pool.Row(i), seed));
            if (distance < minDistance[i])
            {
                minDistance[i] = distance;
            }

            sum += minDistance[i];
        }

        pool.BlockWeight[block] = sum;
    }

    /// <summary>The first row whose cumulative weight exceeds <paramref name="target"/>; a chosen seed has weight 0 and is never drawn.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
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
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
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
