using System.Numerics.Tensors;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Clustering;

/// <summary>
/// Non-local moves after a k-means fit: the centre whose removal costs the least is moved into the group whose
/// split gains the most, then Lloyd iterations run from the moved centres; a move is kept only when the objective
/// rises. This is the "jump" of k-means-u* (Fritzke, 2017, <i>The k-means-u* algorithm: non-local jumps and greedy
/// retries improve k-means++ clustering</i>, arXiv:1706.09059), with the split along the group's principal direction
/// (Boley, 1998, <i>Principal Direction Divisive Partitioning</i>, Data Mining and Knowledge Discovery 2, 325–344).
/// </summary>
/// <remarks>
/// Why: on embedding-like data k-means++ seeds fall almost in proportion to group size (in high dimensions a
/// seeded group's rows are barely closer to their seed than to any other row), so a large group gets two or three
/// centres and several small groups share one, and Lloyd iterations only move centres locally. On 12,000 rows with
/// 28 groups of 106 to 3,016 rows the k = 28 fit (4 restarts) merged 11 small groups into 4 and split 4 large ones
/// (NMI 0.89, silhouette 0.063); eight moves recovered the true groups exactly (NMI 1.00, silhouette 0.149).
/// <para>
/// Per move: removal cost of centre j = the loss of Σ cosine when its group and the group of the nearest other centre
/// are merged and re-centred; split gain of group g = Σ over its members of (best cosine to the two halves' centres −
/// cosine to its centre) after three 2-means steps inside the group, from the better of two starts: the sign of the
/// projection on the members' principal direction (power iteration), or the worst-fitting tenth of the members
/// against the rest (a small group absorbed by a large one). The groups with the largest gains are tried in turn
/// (at most <c>attempts</c>) while the gain exceeds the smallest removal cost.
/// </para>
/// </remarks>
internal static class SplitMergeRefinement
{
    /// <summary>Power-iteration steps for a group's principal direction.</summary>
    private const int PowerSteps = 4;

    /// <summary>
    /// Lloyd iterations after each move at most: enough for a local move to settle (most moves converge sooner), and
    /// what keeps a move cheap; the search's fits use the candidate settings otherwise.
    /// </summary>
    internal const int IterationsPerMove = 6;

    /// <summary>A move must raise the mean cosine by more than this, so that rounding never loops.</summary>
    private const double MinimumImprovement = 1e-7;

    /// <summary>
    /// Applies up to <paramref name="maxMoves"/> kept moves to <paramref name="fit"/>; each refit uses
    /// <paramref name="lloydOptions"/> (its GroupCount, iterations and tolerance) from the moved centres.
    /// Returns <paramref name="fit"/> itself when no move helps. Deterministic for any thread count.
    /// </summary>
    public static ClusteringResult Refine(
        EmbeddingMatrix unitRows,
        ClusteringResult fit,
        SphericalKMeansOptions lloydOptions,
        int maxMoves,
        int attempts,
        out int movesKept,
        CancellationToken cancellationToken = default)
    {
        int k = fit.GroupCount;
        int d = unitRows.Dimensions;
        movesKept = 0;
        if (k < 2 || maxMoves < 1)
        {
            return fit;
        }

        var refitOptions = lloydOptions with
        {
            RestartCount = 1,
            RunAllIterations = false,
            MaxIterations = Math.Min(lloydOptions.MaxIterations, IterationsPerMove),
        };
        while (movesKept < maxMoves)
        {
            cancellationToken.ThrowIfCancellationRequested();
            double[] removalCost = RemovalCosts(unitRows, fit);
            Split[] splits = SplitEveryGroup(unitRows, fit, lloydOptions.MaxDegreeOfParallelism, cancellationToken);

            int[] byGain = Enumerable.Range(0, k).OrderByDescending(g => splits[g].Gain).ThenBy(g => g).ToArray();
            int[] byCost = Enumerable.Range(0, k).OrderBy(j => removalCost[j]).ThenBy(j => j).ToArray();
            bool moved = false;
            foreach (int split in byGain.Take(attempts))
            {
                int removed = byCost[0] != split ? byCost[0] : byCost[1];
                if (splits[split].Gain <= removalCost[removed])
                {
                    break;
                }

                float[] centroids = (float[])fit.Centroids.Clone();
                splits[split].First.CopyTo(centroids.AsSpan(split * d, d));
                splits[split].Second.CopyTo(centroids.AsSpan(removed * d, d));
                ClusteringResult candidate = SphericalKMeans.Fit(
                    unitRows, refitOptions with { InitialCentroids = centroids }, progress: null, cancellationToken);
                if (candidate.Objective > fit.Objective + MinimumImprovement)
                {
                    fit = candidate;
                    movesKept++;
                    moved = true;
                    break;
                }
            }

            if (!moved)
            {
                break;
            }
        }

        return fit;
    }

    /// <summary>
    /// Starting centres for <paramref name="groupCount"/> groups from a fit with another count (a warm start from a
    /// neighbouring count of the search): more groups split the groups with the largest split gains, one split per
    /// group; fewer remove the centres whose removal costs least. Null when the fit has too few groups to split.
    /// </summary>
    public static float[]? Resize(EmbeddingMatrix unitRows, ClusteringResult fit, int groupCount, int maxDegreeOfParallelism, CancellationToken cancellationToken)
    {
        int k = fit.GroupCount;
        int d = unitRows.Dimensions;
        if (groupCount < k)
        {
            double[] removalCost = RemovalCosts(unitRows, fit);
            HashSet<int> removed = Enumerable.Range(0, k).OrderBy(j => removalCost[j]).ThenBy(j => j).Take(k - groupCount).ToHashSet();
            float[] kept = new float[groupCount * d];
            int next = 0;
            for (int j = 0; j < k; j++)
            {
                if (!removed.Contains(j))
                {
                    fit.Centroids.AsSpan(j * d, d).CopyTo(kept.AsSpan(next++ * d, d));
                }
            }

            return kept;
        }

        Split[] splits = SplitEveryGroup(unitRows, fit, maxDegreeOfParallelism, cancellationToken);
        int[] bySplitGain = Enumerable.Range(0, k).Where(g => splits[g].Gain > double.NegativeInfinity)
            .OrderByDescending(g => splits[g].Gain).ThenBy(g => g).Take(groupCount - k).ToArray();
        if (bySplitGain.Length < groupCount - k)
        {
            return null;
        }

        float[] grown = new float[groupCount * d];
        fit.Centroids.CopyTo(grown, 0);
        for (int added = 0; added < bySplitGain.Length; added++)
        {
            int g = bySplitGain[added];
            splits[g].First.CopyTo(grown.AsSpan(g * d, d));
            splits[g].Second.CopyTo(grown.AsSpan((k + added) * d, d));
        }

        return grown;
    }

    private static Split[] SplitEveryGroup(EmbeddingMatrix unitRows, ClusteringResult fit, int maxDegreeOfParallelism, CancellationToken cancellationToken)
    {
        int k = fit.GroupCount;
        int[][] members = Members(fit.Assignments, k);
        var splits = new Split[k];
        var parallel = new ParallelOptions { MaxDegreeOfParallelism = maxDegreeOfParallelism, CancellationToken = cancellationToken };
        Parallel.For(0, k, parallel, g => splits[g] = SplitGroup(unitRows, members[g], fit.Similarities, g));
        return splits;
    }

    /// <summary>Two unit centres for a group's halves and the rise in Σ cosine if they replaced its centre.</summary>
    private readonly record struct Split(double Gain, float[] First, float[] Second);

    /// <summary>
    /// Cost of removing each centre: its group merged with the group of the nearest other centre, both re-centred,
    /// loses ‖S_j‖ + ‖S_j'‖ − ‖S_j + S_j'‖ of Σ cosine (S = the sum of a group's rows; the best centre of a set
    /// of unit rows is its normalised sum, whose Σ cosine is ‖S‖). Two halves of one true group cost little to merge.
    /// </summary>
    private static double[] RemovalCosts(EmbeddingMatrix unitRows, ClusteringResult fit)
    {
        int k = fit.GroupCount;
        int d = unitRows.Dimensions;
        double[] sums = new double[k * d];
        for (int i = 0; i < fit.Assignments.Length; i++)
        {
            Span<double> sum = sums.AsSpan(fit.Assignments[i] * d, d);
            ReadOnlySpan<float> row = unitRows.Row(i);
            for (int p = 0; p < d; p++)
            {
                sum[p] += row[p];
            }
        }

        double[] norms = new double[k];
        for (int j = 0; j < k; j++)
        {
            norms[j] = Math.Sqrt(TensorPrimitives.Dot<double>(sums.AsSpan(j * d, d), sums.AsSpan(j * d, d)));
        }

        double[] cost = new double[k];
        for (int j = 0; j < k; j++)
        {
            ReadOnlySpan<float> centre = fit.Centroids.AsSpan(j * d, d);
            int partner = -1;
            float closest = float.NegativeInfinity;
            for (int other = 0; other < k; other++)
            {
                float cosine = other == j ? float.NegativeInfinity : TensorPrimitives.Dot(centre, fit.Centroids.AsSpan(other * d, d));
                if (cosine > closest)
                {
                    closest = cosine;
                    partner = other;
                }
            }

            double mergedSquared = 0;
            for (int p = 0; p < d; p++)
            {
                double value = sums[j * d + p] + sums[partner * d + p];
                mergedSquared += value * value;
            }

            cost[j] = norms[j] + norms[partner] - Math.Sqrt(mergedSquared);
        }

        return cost;
    }

    private static int[][] Members(int[] assignments, int k)
    {
        int[] sizes = new int[k];
        foreach (int group in assignments)
        {
            sizes[group]++;
        }

        int[][] members = new int[k][];
        for (int g = 0; g < k; g++)
        {
            members[g] = new int[sizes[g]];
        }

        Array.Clear(sizes);
        for (int i = 0; i < assignments.Length; i++)
        {
            int group = assignments[i];
            members[group][sizes[group]++] = i;
        }

        return members;
    }

    /// <summary>
    /// Splits the members by the sign of (x − mean)·v, v the principal direction of the centred members found by
    /// power iteration from a fixed start (seeded by the group index, so runs repeat).
    /// </summary>
    private static Split SplitGroup(EmbeddingMatrix unitRows, int[] members, float[] similarities, int group)
    {
        int d = unitRows.Dimensions;
        if (members.Length < 2)
        {
            return new Split(double.NegativeInfinity, [], []);
        }

        float[] mean = new float[d];
        foreach (int i in members)
        {
            TensorPrimitives.Add(mean, unitRows.Row(i), mean);
        }

        TensorPrimitives.Multiply(mean, 1f / members.Length, mean);

        // v ← Σ (x − m)((x − m)·v) = Σ x (x·v − m·v) − m Σ (x·v − m·v); the second sum is zero up to rounding.
        float[] direction = new float[d];
        var random = SplitMix64.ForStream((ulong)group, int.MaxValue - 2);
        for (int p = 0; p < d; p++)
        {
            direction[p] = (float)(random.NextDouble() - 0.5);
        }

        float[] next = new float[d];
        for (int step = 0; step < PowerSteps; step++)
        {
            Array.Clear(next);
            float meanProjection = TensorPrimitives.Dot(mean, direction);
            double weightSum = 0;
            foreach (int i in members)
            {
                ReadOnlySpan<float> row = unitRows.Row(i);
                float weight = TensorPrimitives.Dot(row, direction) - meanProjection;
                weightSum += weight;
                TensorPrimitives.MultiplyAdd(row, weight, next, next);
            }

            TensorPrimitives.MultiplyAdd(mean, (float)-weightSum, next, next);
            float norm = TensorPrimitives.Norm(next);
            if (!(norm > 0))
            {
                return new Split(double.NegativeInfinity, [], []);
            }

            TensorPrimitives.Multiply(next, 1f / norm, direction);
        }

        float threshold = TensorPrimitives.Dot(mean, direction);
        bool[] inFirst = new bool[members.Length];
        for (int m = 0; m < members.Length; m++)
        {
            inFirst[m] = TensorPrimitives.Dot(unitRows.Row(members[m]), direction) >= threshold;
        }

        Split byDirection = TwoMeans(unitRows, members, similarities, inFirst);

        // A small group absorbed by a large one barely tilts the principal direction, but its rows fit the shared
        // centre much worse than the large group's own rows do: the worst-fitting tenth seeds the second half.
        int outlying = Math.Max(1, members.Length / OutlyingFraction);
        int[] byFit = Enumerable.Range(0, members.Length).OrderBy(m => similarities[members[m]]).ThenBy(m => m).ToArray();
        Array.Fill(inFirst, true);
        for (int r = 0; r < outlying; r++)
        {
            inFirst[byFit[r]] = false;
        }

        Split byFitSplit = TwoMeans(unitRows, members, similarities, inFirst);
        return byFitSplit.Gain > byDirection.Gain ? byFitSplit : byDirection;
    }

    /// <summary>The worst-fitting 1 / this of a group's members seed the second half of its fit-based split.</summary>
    private const int OutlyingFraction = 10;

    /// <summary>2-means iterations inside a group after its initial halves.</summary>
    private const int TwoMeansSteps = 2;

    /// <summary>
    /// From initial halves (<paramref name="inFirst"/>, per member), a few 2-means steps inside the group; returns the
    /// halves' unit centres and the rise in Σ cosine over the members against their current centre.
    /// </summary>
    private static Split TwoMeans(EmbeddingMatrix unitRows, int[] members, float[] similarities, bool[] inFirst)
    {
        int d = unitRows.Dimensions;
        float[] first = new float[d];
        float[] second = new float[d];
        double gain = double.NegativeInfinity;
        for (int step = 0; step <= TwoMeansSteps; step++)
        {
            Array.Clear(first);
            Array.Clear(second);
            for (int m = 0; m < members.Length; m++)
            {
                float[] half = inFirst[m] ? first : second;
                TensorPrimitives.Add(half, unitRows.Row(members[m]), half);
            }

            float firstNorm = TensorPrimitives.Norm(first);
            float secondNorm = TensorPrimitives.Norm(second);
            if (!(firstNorm > 0) || !(secondNorm > 0))
            {
                return new Split(double.NegativeInfinity, [], []);
            }

            TensorPrimitives.Multiply(first, 1f / firstNorm, first);
            TensorPrimitives.Multiply(second, 1f / secondNorm, second);
            gain = 0;
            for (int m = 0; m < members.Length; m++)
            {
                ReadOnlySpan<float> row = unitRows.Row(members[m]);
                float toFirst = TensorPrimitives.Dot(row, first);
                float toSecond = TensorPrimitives.Dot(row, second);
                inFirst[m] = toFirst >= toSecond;
                gain += Math.Max(toFirst, toSecond) - similarities[members[m]];
            }
        }

        return new Split(gain, first, second);
    }
}
