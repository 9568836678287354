using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Clustering;

/// <summary>
/// What a pruned assignment pass keeps between iterations (see <see cref="GroupAssignment"/>): per row, bounds
/// on its cosines and the centroids that were nearest at its last full scoring; per centroid, how far it moved.
/// Shapes: n rows, k centroids of d dimensions. Allocated once per fit: 7 floats, 4 ints per row.
/// </summary>
internal sealed class AssignmentBounds : IDisposable
{
    /// <summary>Centroids tracked by name per row: its most similar ones at its last full scoring.</summary>
    public const int NearCount = 4;

    /// <summary>Most centroids treated as jumpers in one pass: one Vector512 of columns in the kernel's panel.</summary>
    public const int MaxJumpers = CentroidPanel.ColumnAlignment;

    public AssignmentBounds(int n, int d, int k, int workerCount, int blockCount)
    {
        OwnLower = new float[n];
        OtherUpper = new float[n];
        FarUpper = new float[n];
        Near = new int[checked(n * NearCount)];
        NearUpper = new float[checked(n * NearCount)];
        PreviousCentroids = new float[k * d];
        Angle = new double[k];
        Cos = new double[k];
        Sin = new double[k];
        ByAngle = new int[k];
        SortKeys = new double[k];
        JumperSlot = new int[k];
        Jumpers = new int[MaxJumpers];
        JumperValues = new float[MaxJumpers * d];
        JumperPanel = new CentroidPanel(MaxJumpers, d);
        Skipped = new int[blockCount];
        SettledByJumpers = new int[blockCount];
        SettledByNear = new int[blockCount];
        Scored = new int[blockCount];
        GatherRows = new float[workerCount][];
        GatherIndices = new int[workerCount][];
        JumperScores = new float[workerCount][];
        for (int w = 0; w < workerCount; w++)
        {
            GatherRows[w] = new float[RowBlocks.BlockRows * d];
            GatherIndices[w] = new int[RowBlocks.BlockRows];
            JumperScores[w] = new float[RowBlocks.BlockRows * MaxJumpers];
        }
    }

    public void Dispose() => JumperPanel.Dispose();

    /// <summary>Prune every pass after the first, however far the centroids moved (tests; normally passes wait for small moves).</summary>
    public bool AlwaysPrune { get; set; }

    /// <summary>True when the bounds hold for <see cref="PreviousCentroids"/>; false at the start of every run.</summary>
    public bool Valid { get; set; }

    /// <summary>Per row: a lower bound on its cosine to its own centroid.</summary>
    public float[] OwnLower { get; }

    /// <summary>Per row: an upper bound on its cosine to every other centroid.</summary>
    public float[] OtherUpper { get; }

    /// <summary>Per row: an upper bound on its cosine to every centroid not in its near list.</summary>
    public float[] FarUpper { get; }

    /// <summary>Per row, NearCount entries, best first: the most similar centroids at its last full scoring (−1: none). Own is always among them.</summary>
    public int[] Near { get; }

    /// <summary>
    /// Per row, NearCount entries beside <see cref="Near"/>: an upper bound on its cosine to each near centroid (the
    /// entry of its own centroid is unused). Each moves by that centroid's own move, not the largest of all (Elkan,
    /// 2003, kept for the near centroids only): late in a run most centroids stand still, so these bounds stay exact.
    /// </summary>
    public float[] NearUpper { get; }

    /// <summary>The centroids the bounds refer to, k × d.</summary>
    public float[] PreviousCentroids { get; }

    /// <summary>Per centroid: the angle it moved since the last pass, with its cos and sin.</summary>
    public double[] Angle { get; }

    public double[] Cos { get; }

    public double[] Sin { get; }

    /// <summary>Centroid indices by movement, largest first (scratch of MeasureMovements).</summary>
    public int[] ByAngle { get; }

    public double[] SortKeys { get; }

    /// <summary>
    /// Movements that move the bounds: the largest and second-largest of all centroids, and of the stable ones
    /// (all but the jumpers). Index of the largest, then cos/sin of each.
    /// </summary>
    public (int Index, double Cos, double Sin, double SecondCos, double SecondSin) AllLargest { get; set; }

    public (int Index, double Cos, double Sin, double SecondCos, double SecondSin) StableLargest { get; set; }

    /// <summary>
    /// Centroids that moved much more than the rest this pass (at most <see cref="MaxJumpers"/>): rows that fail
    /// the plain bounds are scored against them exactly (one narrow panel), so their jumps do not loosen the
    /// bounds on all other centroids.
    /// </summary>
    public int[] Jumpers { get; }

    public int JumperCount { get; set; }

    /// <summary>Per centroid: its column among the jumpers, or −1.</summary>
    public int[] JumperSlot { get; }

    public float[] JumperValues { get; }

    public CentroidPanel JumperPanel { get; }

    /// <summary>Per block, last pass: rows kept by bounds alone, by bounds plus the jumpers' exact scores, by the near centroids' exact scores, and rows scored in full.</summary>
    public int[] Skipped { get; }

    public int[] SettledByJumpers { get; }

    public int[] SettledByNear { get; }

    public int[] Scored { get; }

    /// <summary>Per worker: gathered rows (BlockRows × d), their indices, and their scores against the jumpers (BlockRows × MaxJumpers).</summary>
    public float[][] GatherRows { get; }

    public int[][] GatherIndices { get; }

    public float[][] JumperScores { get; }
}
