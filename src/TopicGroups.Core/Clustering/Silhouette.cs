using System.Numerics.Tensors;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Clustering;

/// <summary>
/// Silhouettes (Rousseeuw, P. J. (1987). Silhouettes: a graphical aid to the interpretation and validation of
/// cluster analysis. J. Comput. Appl. Math. 20, 53–65) with the cosine distance 1 − cos, for the rows of a
/// seeded sample. For sampled row i in group A: a(i) = mean distance to the other members of A, b(i) = the
/// smallest mean distance to the members of any other group, s(i) = (b − a) / max(a, b), and s(i) = 0 when A
/// has one member (Rousseeuw's convention, also sklearn's).
/// </summary>
/// <remarks>
/// The means run over every row of the batch, not only the sample: the sample only chooses whose
/// silhouettes are averaged, so the mean is an unbiased estimate of the whole batch's and exact when the
/// sample holds every row. For unit rows the sum of distances to a group is linear in the group's sum vector:
/// Σ_{j ∈ B} (1 − x_i · x_j) = |B| − x_i · S_B, so one pass builds the k sums (float64) and each sampled row
/// needs k dot products: O(n d + m k d) work instead of the O(n² d) of the pairwise definition.
/// </remarks>
internal static class Silhouette
{
    /// <summary>Sampled rows per parallel work item; fixed so results do not depend on the thread count.</summary>
    private const int SampleBlock = 64;

    /// <summary>
    /// The seeded sample of row indexes whose silhouettes are averaged: every row when n ≤ sampleSize,
    /// otherwise sampleSize distinct rows drawn uniformly by a partial Fisher–Yates shuffle driven by
    /// <paramref name="random"/>. Returned in ascending order.
    /// </summary>
    public static int[] SampleRows(int n, int sampleSize, ref SplitMix64 random)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(n);
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(sampleSize);
        if (n <= sampleSize)
        {
            return Enumerable.Range(0, n).ToArray();
        }

        int[] permutation = new int[n];
        for (int i = 0; i < n; i++)
        {
            permutation[i] = i;
        }

        for (int i = 0; i < sampleSize; i++)
        {
            int j = i + random.NextInt(n - i);
            (permutation[i], permutation[j]) = (permutation[j], permutation[i]);
        }

        int[] sample = permutation.AsSpan(0, sampleSize).ToArray();
        Array.Sort(sample);
        return sample;
    }

    /// <summary>
    /// Silhouettes of the sampled rows for a partition of all rows into <paramref name="k"/> groups.
    /// </summary>
    /// <param name="unitRows">n × d, unit rows.</param>
    /// <param name="assignments">Group of every row, 0 ≤ group &lt; k; length n.</param>
    /// <param name="sampleRows">Indexes of the rows to score (distinct, each &lt; n).</param>
    /// <param name="workerCount">Threads; results do not depend on it.</param>
    public static SilhouetteSample Compute(
        EmbeddingMatrix unitRows,
        int[] assignments,
        int k,
        int[] sampleRows,
        int workerCount,
        CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(unitRows);
        ArgumentNullException.ThrowIfNull(assignments);
        ArgumentNullException.ThrowIfNull(sampleRows);
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(k);
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(workerCount);
        int n = unitRows.Rows;
        int d = unitRows.Dimensions;
        if (assignments.Length != n)
        {
            throw new ArgumentException($"assignments has {assignments.Length} entries for {n} rows.", nameof(assignments));
        }

        int[] sizes = new int[k];
        foreach (int group in assignments)
        {
            if ((uint)group >= (uint)k)
            {
                throw new ArgumentException($"assignments holds group {group}; groups run from 0 to {k - 1}.", nameof(assignments));
            }

            sizes[group]++;
        }

        foreach (int row in sampleRows)
        {
            if ((uint)row >= (uint)n)
            {
                throw new ArgumentException($"sampleRows holds row {row}; rows run from 0 to {n - 1}.", nameof(sampleRows));
            }
        }

        double[] sums = GroupSums(unitRows, assignments, k, workerCount);
        cancellationToken.ThrowIfCancellationRequested();

        int m = sampleRows.Length;
        int[] sampleGroups = new int[m];
        double[] meanDistances = new double[checked(m * k)];
        double[] values = new double[m];
        int blockCount = (m + SampleBlock - 1) / SampleBlock;
        var blocks = new RowBlocks(blockCount, workerCount);
        double[][] scratch = new double[Math.Min(workerCount, Math.Max(blockCount, 1))][];
        blocks.ForEach(blockCount, (block, worker) =>
        {
            double[] row = scratch[worker] ??= new double[d];
            int end = Math.Min(m, (block + 1) * SampleBlock);
            for (int s = block * SampleBlock; s < end; s++)
            {
                int i = sampleRows[s];
                ReadOnlySpan<float> source = unitRows.Values.AsSpan(i * d, d);
                for (int p = 0; p < d; p++)
                {
                    row[p] = source[p];
                }

                int own = assignments[i];
                sampleGroups[s] = own;
                Span<double> distances = meanDistances.AsSpan(s * k, k);
                double self = TensorPrimitives.Dot<double>(row, row);
                for (int j = 0; j < k; j++)
                {
                    double dot = TensorPrimitives.Dot<double>(row, sums.AsSpan(j * d, d));
                    double mean = j == own
                        ? (sizes[j] > 1 ? 1.0 - (dot - self) / (sizes[j] - 1) : 0.0)
                        : 1.0 - dot / sizes[j];

                    // Rounding can push a mean of near-duplicates a hair below 0; a distance never is.
                    distances[j] = Math.Max(0.0, mean);
                }

                values[s] = sizes[own] > 1 ? Value(distances, own) : 0.0;
            }
        });

        return new SilhouetteSample(sampleRows, sampleGroups, sizes, meanDistances, values, k);
    }

    /// <summary>s = (b − a) / max(a, b) from one row's mean distances; 0 when both are 0 (identical rows everywhere).</summary>
    internal static double Value(ReadOnlySpan<double> meanDistances, int own)
    {
        double a = meanDistances[own];
        double b = double.PositiveInfinity;
        for (int j = 0; j < meanDistances.Length; j++)
        {
            if (j != own && meanDistances[j] < b)
            {
                b = meanDistances[j];
            }
        }

        if (double.IsPositiveInfinity(b))
        {
            return 0.0; // one group: no neighbour to compare with
        }

        double scale = Math.Max(a, b);
        return scale > 0 ? (b - a) / scale : 0.0;
    }

    /// <summary>
    /// k × d float64 sums of each group's rows. Each thread owns a contiguous slice of the dimensions and adds
    /// the rows in ascending order, so every sum is formed in the same order for any thread count.
    /// </summary>
    internal static double[] GroupSums(EmbeddingMatrix unitRows, int[] assignments, int k, int workerCount)
    {
        int n = unitRows.Rows;
        int d = unitRows.Dimensions;
        double[] sums = new double[k * d];
        const int alignment = 8;
        int slices = Math.Max(1, Math.Min(workerCount, d / alignment));
        int width = ((d + slices - 1) / slices + alignment - 1) / alignment * alignment;
        slices = (d + width - 1) / width;
        float[] rows = unitRows.Values;
        new RowBlocks(slices, workerCount).ForEach(slices, (slice, _) =>
        {
            int from = slice * width;
            int length = Math.Min(width, d - from);
            for (int i = 0; i < n; i++)
            {
                Span<double> target = sums.AsSpan(assignments[i] * d + from, length);
                ReadOnlySpan<float> source = rows.AsSpan(i * d + from, length);
                for (int p = 0; p < length; p++)
                {
                    target[p] += source[p];
                }
            }
        });

        return sums;
    }
}

/// <summary>
/// Silhouettes of a sample of rows. Sampled row s is batch row Rows[s], in group Groups[s];
/// MeanDistance(s, j) is its mean cosine distance to the members of group j (itself left out of its own group).
/// </summary>
internal sealed class SilhouetteSample
{
    private readonly double[] _meanDistances;

    public SilhouetteSample(int[] rows, int[] groups, int[] groupSizes, double[] meanDistances, double[] values, int k)
    {
        Rows = rows;
        Groups = groups;
        GroupSizes = groupSizes;
        _meanDistances = meanDistances;
        Values = values;
        GroupCount = k;
    }

    public int[] Rows { get; }

    public int[] Groups { get; }

    /// <summary>Members of each group over the whole batch.</summary>
    public int[] GroupSizes { get; }

    /// <summary>s(i) of each sampled row, in [−1, 1].</summary>
    public double[] Values { get; }

    public int GroupCount { get; }

    public int Count => Rows.Length;

    public double MeanDistance(int sampled, int group) => _meanDistances[sampled * GroupCount + group];

    /// <summary>Mean silhouette of the sample; NaN for one group (no neighbour, so undefined) or an empty sample.</summary>
    public double Mean
    {
        get
        {
            if (GroupCount < 2 || Count == 0)
            {
                return double.NaN;
            }

            double total = 0;
            foreach (double value in Values)
            {
                total += value;
            }

            return total / Count;
        }
    }

    /// <summary>Mean silhouette of the sampled members of each group (NaN where none was sampled) and their counts.</summary>
    public (double[] Means, int[] Counts) GroupMeans()
    {
        double[] means = new double[GroupCount];
        int[] counts = new int[GroupCount];
        for (int s = 0; s < Count; s++)
        {
            means[Groups[s]] += Values[s];
            counts[Groups[s]]++;
        }

        for (int g = 0; g < GroupCount; g++)
        {
            means[g] = counts[g] > 0 && GroupCount > 1 ? means[g] / counts[g] : double.NaN;
        }

        return (means, counts);
    }

    /// <summary>
    /// The mean silhouette of the sampled members of groups a and b as if they were the only two groups:
    /// how well the two can be told apart. NaN when neither has a sampled member.
    /// </summary>
    public double PairMean(int a, int b)
    {
        double total = 0;
        int count = 0;
        for (int s = 0; s < Count; s++)
        {
            int own = Groups[s];
            if (own != a && own != b)
            {
                continue;
            }

            int other = own == a ? b : a;
            count++;
            if (GroupSizes[own] < 2)
            {
                continue; // s = 0 for a lone member
            }

            double inside = MeanDistance(s, own);
            double outside = MeanDistance(s, other);
            double scale = Math.Max(inside, outside);
            total += scale > 0 ? (outside - inside) / scale : 0.0;
        }

        return count > 0 ? total / count : double.NaN;
    }
}
