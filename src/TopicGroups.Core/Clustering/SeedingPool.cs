using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Clustering;

/// <summary>
/// The rows k-means++ draws its seeds from: every row, or, for large inputs, a uniform sample of
/// SampleSize(n, k) = max(8192, 128 × k) rows drawn afresh for each restart from that restart's generator.
/// Each greedy k-means++ step scores the whole pool against its candidates, so seeding costs about k passes
/// over the pool; Lloyd iterations then run on every row, which recovers what a sample can miss. Measured with
/// `bench … -- study` (greedy seeding, 20 iterations, final reassigned objective, median over seeds) on the
/// peers' data: at 100,000 × 384, k = 100, a pool of 256 × k rows gave 0.5801 (10 seeds) and 1.3 s of seeding on
/// a loaded machine, a pool of 8,192 rows 0.5810 and 0.28 s; on the harder variant 0.4804 against 0.4811; at
/// 300,000 × 768, k = 200 (3 seeds, within seed-to-seed spread) 256 × k rows gave 0.5832, 128 × k 0.5816 and
/// 64 × k 0.5815, with seeding 6.4, 2.1 and 2.0 s. The pool copy (packed for the kernel) is 128 × k × d floats (79 MB at
/// k = 200, d = 768); below the sample size it is a packed copy of every row. (k-means++ on a sample is common practice without a single source; faiss likewise trains on at
/// most 256 rows per centroid by default.)
/// </summary>
internal sealed class SeedingPool : IDisposable
{
    /// <summary>Pool rows per group when sampling: 128 × k, never fewer than <see cref="MinimumSample"/>.</summary>
    public const int SampleRowsPerGroup = 128;

    public const int MinimumSample = 8192;

    private readonly float[] _allRows;
    private readonly int[]? _permutation;
    private readonly int _totalRows;

    public SeedingPool(float[] allRows, int n, int d, int k, int workerCount, bool sample, int maxCandidates, int sampleRowsPerGroup = SampleRowsPerGroup)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(maxCandidates, 1);
        _allRows = allRows;
        _totalRows = n;
        D = d;
        N = sample ? SampleSize(n, k, sampleRowsPerGroup) : n;
        IsSampled = N < n;
        SourceRows = new int[N];
        Packed = new CentroidPanel(N, d);
        if (IsSampled)
        {
            _permutation = new int[n];
        }
        else
        {
            for (int i = 0; i < N; i++)
            {
                SourceRows[i] = i;
            }
        }

        // Blocks of pool rows are whole panels of the packed pool: 256 rows = 4 panels of 64.
        Blocks = new RowBlocks(N, workerCount);
        if (!IsSampled)
        {
            PackPool();
        }

        MinDistance = new float[N];
        IsSeed = new bool[N];
        BlockWeight = new double[Blocks.Count];

        MaxCandidates = maxCandidates;
        CandidateRows = new int[maxCandidates];
        CandidateValues = new float[maxCandidates * d];
        CandidateScores = new float[(long)N * maxCandidates > Array.MaxLength ? throw new ArgumentOutOfRangeException(nameof(maxCandidates)) : N * maxCandidates];
        BlockCandidateWeight = new double[Blocks.Count * maxCandidates];
    }

    public static int SampleSize(int n, int k, int rowsPerGroup = SampleRowsPerGroup) => (int)Math.Min(n, Math.Max(MinimumSample, (long)rowsPerGroup * k));

    public bool IsSampled { get; }

    /// <summary>
    /// The pool rows packed as the columns of a <see cref="CentroidPanel"/> (N columns of d values): a k-means++ step
    /// scores its few candidates (as rows) against every pool row (as columns) with full register tiles.
    /// </summary>
    public CentroidPanel Packed { get; }

    public int N { get; }

    public int D { get; }

    /// <summary>The input row behind each pool row, ascending.</summary>
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

    /// <summary>The candidates' values, MaxCandidates × D, row-major.</summary>
    public float[] CandidateValues { get; }

    /// <summary>The current step's scores, candidates × N: CandidateScores[l * N + i] = cos(candidate l, pool row i).</summary>
    public float[] CandidateScores { get; }

    /// <summary>Per block and candidate (stride MaxCandidates): Σ min(D, 1 − cos) if that candidate were kept.</summary>
    public double[] BlockCandidateWeight { get; }

    /// <summary>Pool row i, read from the caller's matrix.</summary>
    public ReadOnlySpan<float> Row(int i) => _allRows.AsSpan(SourceRows[i] * D, D);

    /// <summary>
    /// Draws this restart's sample: a partial Fisher–Yates shuffle (Knuth, TAOCP vol. 2, Algorithm P,
    /// stopped after N steps) of all row indices, sorted so the packing reads the input front to back, then
    /// packs those rows. Does nothing when the pool is every row (packed once at construction).
    /// </summary>
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveOptimization)]
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
        PackPool();
    }

    public void Dispose() => Packed.Dispose();

    /// <summary>
    /// Packs the pool rows block by block on every worker: besides the copy, a pool met for the first time in a
    /// process touches fresh memory, and page faults are served in parallel (measured here: 64 MiB took 200 ms
    /// from one thread, 110 ms from two).
    /// </summary>
    private void PackPool()
    {
        const int panelsPerBlock = RowBlocks.BlockRows / CentroidPanel.PanelColumns;
        Blocks.ForEachBlock((block, _) =>
        {
            int firstPanel = block * panelsPerBlock;
            Packed.PackRows(_allRows, SourceRows, firstPanel, Math.Min(panelsPerBlock, Packed.PanelCount - firstPanel));
        });
    }
}
