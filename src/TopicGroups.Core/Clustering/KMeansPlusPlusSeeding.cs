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

        double total = Keep(pool, centroids, 0, random.NextInt(n));
        for (int c = 1; c < k; c++)
        {
            cancellationToken.ThrowIfCancellationRequested();
            total = total > 0
                ? Step(pool, centroids, c, candidatesPerStep, total, ref random)
                : Keep(pool, centroids, c, DrawUnchosen(pool, ref random, c));
        }

        // Σ (1 − D) / n = mean cosine to the nearest seed.
        return (n - total) / n;
    }

    /// <summary>Makes pool row <paramref name="row"/> seed <paramref name="seedIndex"/>; returns the new Σ D.</summary>
    private static double Keep(SeedingPool pool, float[] centroids, int seedIndex, int row)
    {
        pool.CandidateRows[0] = row;
        pool.Row(row).CopyTo(pool.CandidateValues.AsSpan(0, pool.D));
        ScoreCandidates(pool, 1, weighCandidates: false);
        return KeepCandidate(pool, centroids, seedIndex, 0);
    }

    /// <summary>
    /// Draws <paramref name="candidates"/> rows with probability ∝ D, scores the pool against all of them at
    /// once, keeps the candidate with the lowest Σ min(D, 1 − cos) (ties: the earlier draw) as seed
    /// <paramref name="seedIndex"/>, and returns the new Σ D (reduced in block order).
    /// </summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static double Step(SeedingPool pool, float[] centroids, int seedIndex, int candidates, double total, ref SplitMix64 random)
    {
        int d = pool.D;
        for (int l = 0; l < candidates; l++)
        {
            int drawn = DrawWeighted(pool, random.NextDouble() * total);
            pool.CandidateRows[l] = drawn;
            pool.Row(drawn).CopyTo(pool.CandidateValues.AsSpan(l * d, d));
        }

        ScoreCandidates(pool, candidates, weighCandidates: candidates > 1);
        int best = 0;
        if (candidates > 1)
        {
            double bestPotential = double.PositiveInfinity;
            for (int l = 0; l < candidates; l++)
            {
                double potential = 0;
                for (int block = 0; block < pool.Blocks.Count; block++)
                {
                    potential += pool.BlockCandidateWeight[block * pool.MaxCandidates + l];
                }

                if (potential < bestPotential)
                {
                    best = l;
                    bestPotential = potential;
                }
            }
        }

        return KeepCandidate(pool, centroids, seedIndex, best);
    }

    /// <summary>Scores every pool row against the candidates (and, when asked, sums per block the distances each would leave).</summary>
    private static void ScoreCandidates(SeedingPool pool, int candidates, bool weighCandidates) =>
        pool.Blocks.ForEachBlock((block, _) => ScoreCandidatesBlock(pool, candidates, weighCandidates, block));

    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static void ScoreCandidatesBlock(SeedingPool pool, int candidates, bool weighCandidates, int block)
    {
        int n = pool.N;
        int start = pool.Blocks.Start(block);
        int length = pool.Blocks.Length(block);
        int firstPanel = start / CentroidPanel.PanelColumns;
        int panels = (length + CentroidPanel.PanelColumns - 1) / CentroidPanel.PanelColumns;
        panels = Math.Min(panels, pool.Packed.PanelCount - firstPanel);
        float[] scores = pool.CandidateScores;
        BlockScores.ComputeColumns(pool.CandidateValues.AsSpan(0, candidates * pool.D), pool.Packed, firstPanel, panels, scores, n);
        if (!weighCandidates)
        {
            return;
        }

        float[] minDistance = pool.MinDistance;
        for (int l = 0; l < candidates; l++)
        {
            ReadOnlySpan<float> row = scores.AsSpan(l * n + start, length);
            double sum = 0;
            for (int j = 0; j < length; j++)
            {
                sum += MathF.Min(minDistance[start + j], MathF.Max(0f, 1f - row[j]));
            }

            pool.BlockCandidateWeight[block * pool.MaxCandidates + l] = sum;
        }
    }

    /// <summary>Makes candidate <paramref name="kept"/> the seed and lowers every row's distance with it; returns Σ D in block order.</summary>
    private static double KeepCandidate(SeedingPool pool, float[] centroids, int seedIndex, int kept)
    {
        int row = pool.CandidateRows[kept];
        pool.IsSeed[row] = true;
        pool.CandidateValues.AsSpan(kept * pool.D, pool.D).CopyTo(centroids.AsSpan(seedIndex * pool.D, pool.D));
        RowBlocks blocks = pool.Blocks;
        blocks.ForEachBlock((block, _) => KeepCandidateBlock(pool, kept, block));
        double total = 0;
        for (int block = 0; block < blocks.Count; block++)
        {
            total += pool.BlockWeight[block];
        }

        return total;
    }

    /// <summary>Lowers each row's distance with the kept candidate; a seed's own distance is exactly 0, so it is never drawn again.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static void KeepCandidateBlock(SeedingPool pool, int kept, int block)
    {
        int start = pool.Blocks.Start(block);
        int end = start + pool.Blocks.Length(block);
        float[] minDistance = pool.MinDistance;
        ReadOnlySpan<float> scores = pool.CandidateScores.AsSpan(kept * pool.N, pool.N);
        double sum = 0;
        for (int i = start; i < end; i++)
        {
            // Clamped at 0: rounding can put a cosine a hair above 1.
            float distance = pool.IsSeed[i] ? 0f : MathF.Max(0f, 1f - scores[i]);
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
