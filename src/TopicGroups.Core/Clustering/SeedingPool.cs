using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Clustering;

/// <summary>
/// The rows k-means++ draws its seeds from: every row, or, for large inputs, a uniform sample of
/// SampleSize(n, k) rows drawn afresh for each restart from that restart's generator. Seeding costs k
/// passes over its pool and each pass is memory-bound (one row read per dot product), so at 100,000 × 384
/// with k = 100 the whole-data version reads 15 GB; on the 25,600-row sample it reads 4 GB. Lloyd
/// iterations then run on every row, which recovers what a sample can miss. Measured with
/// `bench … -- seeding` (clustered synthetic rows, 20 iterations): at 100,000 × 384, k = 100 seeding took
/// 0.6–0.8 s instead of 1.9–2.9 s and the final objective was higher for all 3 seeds (by 0.0005–0.001);
/// at 20,000 × 384, k = 32 the mean over 8 seeds was 0.0022 lower, inside the seed-to-seed spread of 0.007.
/// (k-means++ on a sample is common practice without a single source; faiss likewise trains on at most
/// 256 rows per centroid by default.)
/// </summary>
internal sealed class SeedingPool
{
    /// <summary>Pool rows per group when sampling: 256 × k, never fewer than <see cref="MinimumSample"/>.</summary>
    public const int SampleRowsPerGroup = 256;

    public const int MinimumSample = 8192;

    private readonly float[] _allRows;
    private readonly int[]? _permutation;
    private readonly int _totalRows;
    private readonly CentroidPanel?[] _panels;

    public SeedingPool(float[] allRows, int n, int d, int k, int workerCount, bool sample, int maxCandidates)
    {
        _allRows = allRows;
        _totalRows = n;
        D = d;
        N = sample ? SampleSize(n, k) : n;
        IsSampled = N < n;
        if (IsSampled)
        {
            Rows = new float[N * d];
            SourceRows = new int[N];
            _permutation = new int[n];
        }
        else
        {
            Rows = allRows;
            SourceRows = [];
        }

        Blocks = new RowBlocks(N, workerCount);
        MinDistance = new float[N];
        IsSeed = new bool[N];
        BlockWeight = new double[Blocks.Count];

        MaxCandidates = maxCandidates;
        CandidateRows = new int[maxCandidates];
        CandidateValues = new float[maxCandidates * d];
        CandidateScores = maxCandidates > 1 ? new float[(long)N * maxCandidates > Array.MaxLength ? throw new ArgumentOutOfRangeException(nameof(maxCandidates)) : N * maxCandidates] : [];
        BlockCandidateWeight = new double[Blocks.Count * maxCandidates];
        _panels = new CentroidPanel?[maxCandidates + 1];
    }

    public static int SampleSize(int n, int k) => (int)Math.Min(n, Math.Max(MinimumSample, (long)SampleRowsPerGroup * k));

    public bool IsSampled { get; }

    /// <summary>Pool rows, N × D: the caller's matrix, or the sample's copy.</summary>
    public float[] Rows { get; }

    public int N { get; }

    public int D { get; }

    /// <summary>When sampled: the input row behind each pool row, ascending.</summary>
    public int[] SourceRows { get; }

    public RowBlocks Blocks { get; }

    /// <summary>1 − max cosine of each pool row to the seeds chosen so far.</summary>
    public float[] MinDistance { get; }

    public bool[] IsSeed { get; }

    /// <summary>Per block: Σ MinDistance, reduced in block order.</summary>
    public double[] BlockWeight { get; }

    /// <summary>Most candidates a greedy k-means++ step may draw.</summary>
    public int MaxCandidates { get; }

    /// <summary>Pool indices of the current step's candidates.</summary>
    public int[] CandidateRows { get; }

    /// <summary>The candidates' values, MaxCandidates × D.</summary>
    public float[] CandidateValues { get; }

    /// <summary>N × candidates scores of the current step (row-major, stride = that step's candidate count).</summary>
    public float[] CandidateScores { get; }

    /// <summary>Per block and candidate (stride MaxCandidates): Σ min(D, 1 − cos) if that candidate were kept.</summary>
    public double[] BlockCandidateWeight { get; }

    /// <summary>The packed panel for <paramref name="candidates"/> candidates, allocated once per count.</summary>
    public CentroidPanel CandidatePanel(int candidates) => _panels[candidates] ??= new CentroidPanel(candidates, D);

    public ReadOnlySpan<float> Row(int i) => Rows.AsSpan(i * D, D);

    /// <summary>
    /// Draws this restart's sample: a partial Fisher–Yates shuffle (Knuth, TAOCP vol. 2, Algorithm P,
    /// stopped after N steps) of all row indices, then sorted so the copy reads the input front to back.
    /// Does nothing when the pool is every row.
    /// </summary>
    public void Draw(ref SplitMix64 random)
    {
        if (!IsSampled)
        {
            return;
        }

        int[] permutation = _permutation!;
        for (int i = 0; i < _totalRows; i++)
        {
            permutation[i] = i;
        }

        for (int t = 0; t < N; t++)
        {
            int j = t + random.NextInt(_totalRows - t);
            (permutation[t], permutation[j]) = (permutation[j], permutation[t]);
        }

        permutation.AsSpan(0, N).CopyTo(SourceRows);
        Array.Sort(SourceRows);
        for (int s = 0; s < N; s++)
        {
            _allRows.AsSpan(SourceRows[s] * D, D).CopyTo(Rows.AsSpan(s * D, D));
        }
    }
}
