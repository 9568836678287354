using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Clustering;

/// <summary>
/// Every buffer one fit needs, allocated once and reused by all restarts and iterations.
/// Shapes: rows n × d (the caller's matrix, not copied), centroids k × d, per-row arrays of length n.
/// Disposing gives the packed panels back to <see cref="PinnedBuffers"/> for the next fit.
/// </summary>
internal sealed class ClusteringWorkspace : IDisposable
{
    public ClusteringWorkspace(EmbeddingMatrix unitRows, int groupCount, int workerCount, bool sampleForSeeding, int seedCandidates, bool pruning = true, int sampleRowsPerGroup = SeedingPool.SampleRowsPerGroup)
    {
        Rows = unitRows.Values;
        N = unitRows.Rows;
        D = unitRows.Dimensions;
        K = groupCount;
        Blocks = new RowBlocks(N, workerCount);

        Centroids = new float[K * D];
        Panel = new CentroidPanel(K, D);
        Assignments = new int[N];
        Similarities = new float[N];
        RunnerUpGroups = new int[N];
        RunnerUpSimilarities = new float[N];

        BlockObjective = new double[Blocks.Count];
        BlockReassigned = new int[Blocks.Count];
        BlockScratch = new float[workerCount][];
        for (int w = 0; w < workerCount; w++)
        {
            BlockScratch[w] = new float[RowBlocks.BlockRows * K];
        }

        GroupSizes = new int[K];
        Sums = new double[K * D];
        SummedAssignments = new int[N];
        Array.Fill(SummedAssignments, -1);

        Bounds = pruning ? new AssignmentBounds(N, D, K, workerCount, Blocks.Count) : null;

        Seeding = new SeedingPool(Rows, N, D, K, workerCount, sampleForSeeding, seedCandidates, sampleRowsPerGroup);
    }

    public float[] Rows { get; }

    public int N { get; }

    public int D { get; }

    public int K { get; }

    public RowBlocks Blocks { get; }

    /// <summary>k × d, row-major, unit rows once a run has started.</summary>
    public float[] Centroids { get; }

    /// <summary>The centroids packed for <see cref="BlockScores"/>; repacked before every scoring pass.</summary>
    public CentroidPanel Panel { get; }

    public int[] Assignments { get; }

    /// <summary>Cosine of each row to its assigned centroid, as of the last scoring pass.</summary>
    public float[] Similarities { get; }

    public int[] RunnerUpGroups { get; }

    public float[] RunnerUpSimilarities { get; }

    /// <summary>Per block: sum of the rows' best cosines (an objective partial sum, reduced in block order).</summary>
    public double[] BlockObjective { get; }

    /// <summary>Per block: rows whose group changed in the last assignment pass.</summary>
    public int[] BlockReassigned { get; }

    /// <summary>Per worker: BlockRows × k scores.</summary>
    public float[][] BlockScratch { get; }

    public int[] GroupSizes { get; }

    /// <summary>k × d, float64 sums of each group's member rows.</summary>
    public double[] Sums { get; }

    /// <summary>Group of each row when <see cref="Sums"/> was last brought up to date (−1: not in any sum).</summary>
    public int[] SummedAssignments { get; }

    /// <summary>The pruning state (bounds per row, centroid movements), or null when every pass scores every row.</summary>
    public AssignmentBounds? Bounds { get; }

    /// <summary>The rows k-means++ draws from (all, or a per-restart sample of large inputs).</summary>
    public SeedingPool Seeding { get; }

    public void Dispose()
    {
        Panel.Dispose();
        Seeding.Dispose();
        Bounds?.Dispose();
    }

    public ReadOnlySpan<float> Row(int i) => Rows.AsSpan(i * D, D);

    public Span<float> Centroid(int c) => Centroids.AsSpan(c * D, D);
}
