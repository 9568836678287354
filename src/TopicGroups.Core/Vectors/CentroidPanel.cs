namespace TopicGroups.Core.Vectors;

/// <summary>
/// Centroids k × d repacked for <see cref="BlockScores"/>: columns padded with zeros to a multiple of 16,
/// then cut into panels of up to 64 columns; panel q stores, for each dimension p, its columns
/// side by side: Values[Offset(q) + p * Width(q) + c] = centroid (64q + c), coordinate p.
/// A kernel then loads 16 centroids' coordinate p with one vector load and walks each panel
/// front to back. Allocated once per fit (pinned, 64-byte aligned) and repacked each iteration.
/// The storage is rented from <see cref="PinnedBuffers"/>: it holds stale values until packed, and
/// <see cref="Dispose"/> gives it back (a panel is unusable afterwards).
/// </summary>
internal sealed class CentroidPanel : IDisposable
{
    /// <summary>Columns per panel: 64 × 384 dimensions × 4 bytes = 96 KiB, which stays in L2.</summary>
    public const int PanelColumns = 64;

    /// <summary>Column padding: one Vector512 of float32.</summary>
    public const int ColumnAlignment = 16;

    private const int AlignmentBytes = 64;

    private readonly PinnedBuffers _buffers;
    private float[]? _storage;

    /// <param name="k">Columns (centroids).</param>
    /// <param name="d">Dimensions.</param>
    /// <param name="buffers">Where the storage is rented; the process's shared buffers unless given.</param>
    public CentroidPanel(int k, int d, PinnedBuffers? buffers = null)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(k);
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(d);
        K = k;
        D = d;
        PaddedK = (k + ColumnAlignment - 1) / ColumnAlignment * ColumnAlignment;
        PanelCount = (PaddedK + PanelColumns - 1) / PanelColumns;
        int length = checked(PaddedK * d);
        _buffers = buffers ?? PinnedBuffers.Shared;
        _storage = _buffers.Rent(length + AlignmentBytes / sizeof(float));
        unsafe
        {
            fixed (float* start = _storage)
            {
                // Pinned, so the address is stable: skip ahead to the first 64-byte boundary.
                StorageOffset = (int)((AlignmentBytes - ((nuint)start % AlignmentBytes)) % AlignmentBytes / sizeof(float));
            }
        }
    }

    public int K { get; }

    public int D { get; }

    /// <summary>k rounded up to a multiple of 16.</summary>
    public int PaddedK { get; }

    public int PanelCount { get; }

    internal int StorageOffset { get; }

    /// <summary>The packed values, PaddedK × d in panel order; padding columns are zero once packed.</summary>
    public Span<float> Values => (_storage ?? throw new ObjectDisposedException(nameof(CentroidPanel))).AsSpan(StorageOffset, PaddedK * D);

    /// <summary>Gives the storage back for the next panel; safe to call twice.</summary>
    public void Dispose()
    {
        float[]? storage = Interlocked.Exchange(ref _storage, null);
        if (storage is not null)
        {
            _buffers.Return(storage);
        }
    }

    /// <summary>Columns in panel q: 16, 32, 48 or 64.</summary>
    public int Width(int panel) => Math.Min(PanelColumns, PaddedK - panel * PanelColumns);

    /// <summary>Start of panel q in <see cref="Values"/>.</summary>
    public int Offset(int panel) => panel * PanelColumns * D;

    /// <summary>Packs rows source[rowIndices[j]] (row-major, d values each) as columns j = 0 .. K − 1.</summary>
    public void PackRows(ReadOnlySpan<float> source, ReadOnlySpan<int> rowIndices)
    {
        if (rowIndices.Length != K)
        {
            throw new ArgumentException($"rowIndices has {rowIndices.Length} entries; {K} expected.", nameof(rowIndices));
        }

        PackRows(source, rowIndices, 0, PanelCount);
    }

    /// <summary>
    /// Like <see cref="PackRows(ReadOnlySpan{float}, ReadOnlySpan{int})"/> for the panels firstPanel ..
    /// firstPanel + panelCount − 1 only, so that callers can fill a large panel from several threads (each
    /// panel is written by exactly one call).
    /// </summary>
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveOptimization)]
    public void PackRows(ReadOnlySpan<float> source, ReadOnlySpan<int> rowIndices, int firstPanel, int panelCount)
    {
        if (rowIndices.Length != K)
        {
            throw new ArgumentException($"rowIndices has {rowIndices.Length} entries; {K} expected.", nameof(rowIndices));
        }

        ArgumentOutOfRangeException.ThrowIfNegative(firstPanel);
        ArgumentOutOfRangeException.ThrowIfGreaterThan(firstPanel + panelCount, PanelCount);

        // Panel by panel, dimension by dimension: the writes run front to back and a panel's 64 source rows
        // (64 × d floats) stay in cache while their values are spread (writing row by row instead scatters every
        // value to its own cache line: the seeding sample draw at 100,000 × 384, k = 100 took 35 ms that way, 19–24 ms so).
        Span<float> values = Values;
        for (int panel = firstPanel; panel < firstPanel + panelCount; panel++)
        {
            int width = Width(panel);
            int firstColumn = panel * PanelColumns;
            int columns = Math.Min(width, K - firstColumn);
            Span<float> block = values.Slice(Offset(panel), width * D);
            for (int p = 0; p < D; p++)
            {
                Span<float> line = block.Slice(p * width, width);
                for (int c = 0; c < columns; c++)
                {
                    line[c] = source[rowIndices[firstColumn + c] * D + p];
                }

                line[columns..].Clear();
            }
        }
    }

    /// <summary>Repacks row-major centroids k × d.</summary>
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveOptimization)]
    public void Pack(ReadOnlySpan<float> centroids)
    {
        if (centroids.Length != K * D)
        {
            throw new ArgumentException($"centroids has {centroids.Length} values; {K} × {D} = {K * D} expected.", nameof(centroids));
        }

        Span<float> values = Values;
        for (int panel = 0; panel < PanelCount; panel++)
        {
            int width = Width(panel);
            Span<float> block = values.Slice(Offset(panel), width * D);
            int firstColumn = panel * PanelColumns;
            for (int c = 0; c < width; c++)
            {
                int j = firstColumn + c;
                if (j < K)
                {
                    ReadOnlySpan<float> centroid = centroids.Slice(j * D, D);
                    for (int p = 0; p < D; p++)
                    {
                        block[p * width + c] = centroid[p];
                    }
                }
                else
                {
                    for (int p = 0; p < D; p++)
                    {
                        block[p * width + c] = 0f;
                    }
                }
            }
        }
    }
}
