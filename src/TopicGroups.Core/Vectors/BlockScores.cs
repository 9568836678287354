using System.Runtime.CompilerServices;
using System.Runtime.Intrinsics;
using System.Runtime.Intrinsics.X86;

namespace TopicGroups.Core.Vectors;

/// <summary>
/// Scores a block of rows against every centroid: scores[i * stride + j] = dot(rows[i], centroids[j]).
/// rows: n × d, centroids: k × d (or a <see cref="CentroidPanel"/> of them), scores: n rows of stride ≥ k,
/// all row-major; only columns 0..k-1 of each score row are written. With unit rows a score is a cosine.
/// </summary>
/// <remarks>
/// This is the n × d by d × k product at the heart of every assignment step. The vector paths are
/// register-tiled like a GEMM micro-kernel: a tile of up to 6 rows × 64 centroids keeps 24 Vector512
/// accumulators in registers; per dimension it loads 4 vectors of 16 centroids from the packed panel,
/// broadcasts one value per row and issues 24 FMAs, so there is no horizontal sum at all.
/// Every path adds the d products of each score in ascending p with one rounding per step (FMA), like
/// <see cref="Scalar"/>, so the paths agree bit for bit; NaN in an input gives NaN in the scores it touches.
/// </remarks>
internal static class BlockScores
{
    private const int Rows512 = 6;
    private const int Columns512 = 4;
    private const int Rows256 = 4;
    private const int Columns256 = 2;

    /// <summary>The fastest path this machine supports (packs the centroids first; allocates a panel).</summary>
    public static void Compute(ReadOnlySpan<float> rows, ReadOnlySpan<float> centroids, int d, Span<float> scores)
    {
        (int n, int k) = CheckShapes(rows, centroids, d, scores);
        if (n == 0 || k == 0)
        {
            return;
        }

        using var panel = new CentroidPanel(k, d);
        panel.Pack(centroids);
        Compute(rows, panel, scores, k);
    }

    /// <summary>The fastest path this machine supports, on centroids already packed: the form a fit uses.</summary>
    public static void Compute(ReadOnlySpan<float> rows, CentroidPanel panel, Span<float> scores, int stride)
    {
        if (Vector512.IsHardwareAccelerated)
        {
            Vector512Path(rows, panel, scores, stride);
        }
        else if (Vector256.IsHardwareAccelerated && Fma.IsSupported)
        {
            Vector256Path(rows, panel, scores, stride);
        }
        else
        {
            ScalarPacked(rows, panel, scores, stride);
        }
    }

    /// <summary>
    /// Like <see cref="Compute(ReadOnlySpan{float}, CentroidPanel, Span{float}, int)"/> for the panels
    /// firstPanel .. firstPanel + panelCount − 1 only (columns 64·firstPanel onward): lets callers split a wide
    /// panel (many columns, few rows) into column blocks. Scores keep their absolute column index.
    /// </summary>
    public static void ComputeColumns(ReadOnlySpan<float> rows, CentroidPanel panel, int firstPanel, int panelCount, Span<float> scores, int stride)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(firstPanel);
        ArgumentOutOfRangeException.ThrowIfNegative(panelCount);
        ArgumentOutOfRangeException.ThrowIfGreaterThan(firstPanel + panelCount, panel.PanelCount, nameof(panelCount));
        if (Vector512.IsHardwareAccelerated)
        {
            Vector512Panels(rows, panel, firstPanel, firstPanel + panelCount, scores, stride);
        }
        else if (Vector256.IsHardwareAccelerated && Fma.IsSupported)
        {
            Vector256Panels(rows, panel, firstPanel, firstPanel + panelCount, scores, stride);
        }
        else
        {
            ScalarPanels(rows, panel, firstPanel, firstPanel + panelCount, scores, stride);
        }
    }

    /// <summary>The plain triple loop on row-major centroids: the definition every faster path is tested against.</summary>
    internal static void Scalar(ReadOnlySpan<float> rows, ReadOnlySpan<float> centroids, int d, Span<float> scores)
    {
        (int n, int k) = CheckShapes(rows, centroids, d, scores);
        for (int i = 0; i < n; i++)
        {
            for (int j = 0; j < k; j++)
            {
                float sum = 0f;
                for (int p = 0; p < d; p++)
                {
                    sum = MathF.FusedMultiplyAdd(rows[i * d + p], centroids[j * d + p], sum);
                }

                scores[i * k + j] = sum;
            }
        }
    }

    /// <summary>The scalar fallback on packed centroids (machines with neither Vector512 nor Vector256 with FMA).</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    internal static void ScalarPacked(ReadOnlySpan<float> rows, CentroidPanel panel, Span<float> scores, int stride) =>
        ScalarPanels(rows, panel, 0, panel?.PanelCount ?? 0, scores, stride);

    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    internal static void ScalarPanels(ReadOnlySpan<float> rows, CentroidPanel panel, int firstPanel, int endPanel, Span<float> scores, int stride)
    {
        int n = CheckPacked(rows, panel, scores, stride);
        int d = panel.D;
        ReadOnlySpan<float> values = panel.Values;
        for (int q = firstPanel; q < endPanel; q++)
        {
            int width = panel.Width(q);
            ReadOnlySpan<float> block = values.Slice(panel.Offset(q), width * d);
            int firstColumn = q * CentroidPanel.PanelColumns;
            int columns = Math.Min(width, panel.K - firstColumn);
            for (int i = 0; i < n; i++)
            {
                for (int c = 0; c < columns; c++)
                {
                    float sum = 0f;
                    for (int p = 0; p < d; p++)
                    {
                        sum = MathF.FusedMultiplyAdd(rows[i * d + p], block[p * width + c], sum);
                    }

                    scores[i * stride + firstColumn + c] = sum;
                }
            }
        }
    }

    /// <summary>Tiles of 6 rows × 4 Vector512 (64 centroids); 24 accumulators of the 32 zmm registers.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    internal static void Vector512Path(ReadOnlySpan<float> rows, CentroidPanel panel, Span<float> scores, int stride) =>
        Vector512Panels(rows, panel, 0, panel?.PanelCount ?? 0, scores, stride);

    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    internal static unsafe void Vector512Panels(ReadOnlySpan<float> rows, CentroidPanel panel, int firstPanel, int endPanel, Span<float> scores, int stride)
    {
        if (!Vector512.IsHardwareAccelerated)
        {
            throw new PlatformNotSupportedException("Vector512 is not hardware accelerated on this machine.");
        }

        int n = CheckPacked(rows, panel, scores, stride);
        int d = panel.D;
        fixed (float* rowsStart = rows)
        fixed (float* panelStart = panel.Values)
        fixed (float* scoresStart = scores)
        {
            for (int q = firstPanel; q < endPanel; q++)
            {
                int width = panel.Width(q);
                int firstColumn = q * CentroidPanel.PanelColumns;
                int columnsLeft = panel.K - firstColumn;
                float* block = panelStart + panel.Offset(q);
                int vectors = width / Vector512<float>.Count;
                int i = 0;
                for (; i + Rows512 <= n; i += Rows512)
                {
                    Tile512ForWidth<Six>(vectors, rowsStart + (nint)i * d, d, block, width, scoresStart + (nint)i * stride + firstColumn, stride, columnsLeft);
                }

                switch (n - i)
                {
                    case 5: Tile512ForWidth<Five>(vectors, rowsStart + (nint)i * d, d, block, width, scoresStart + (nint)i * stride + firstColumn, stride, columnsLeft); break;
                    case 4: Tile512ForWidth<Four>(vectors, rowsStart + (nint)i * d, d, block, width, scoresStart + (nint)i * stride + firstColumn, stride, columnsLeft); break;
                    case 3: Tile512ForWidth<Three>(vectors, rowsStart + (nint)i * d, d, block, width, scoresStart + (nint)i * stride + firstColumn, stride, columnsLeft); break;
                    case 2: Tile512ForWidth<Two>(vectors, rowsStart + (nint)i * d, d, block, width, scoresStart + (nint)i * stride + firstColumn, stride, columnsLeft); break;
                    case 1: Tile512ForWidth<One>(vectors, rowsStart + (nint)i * d, d, block, width, scoresStart + (nint)i * stride + firstColumn, stride, columnsLeft); break;
                }
            }
        }
    }

    /// <summary>Tiles of 4 rows × 2 Vector256 (16 centroids); 8 accumulators, within AVX2's 16 ymm registers.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    internal static void Vector256Path(ReadOnlySpan<float> rows, CentroidPanel panel, Span<float> scores, int stride) =>
        Vector256Panels(rows, panel, 0, panel?.PanelCount ?? 0, scores, stride);

    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    internal static unsafe void Vector256Panels(ReadOnlySpan<float> rows, CentroidPanel panel, int firstPanel, int endPanel, Span<float> scores, int stride)
    {
        if (!Vector256.IsHardwareAccelerated || !Fma.IsSupported)
        {
            throw new PlatformNotSupportedException("Vector256 with FMA is not hardware accelerated on this machine.");
        }

        int n = CheckPacked(rows, panel, scores, stride);
        int d = panel.D;
        fixed (float* rowsStart = rows)
        fixed (float* panelStart = panel.Values)
        fixed (float* scoresStart = scores)
        {
            for (int q = firstPanel; q < endPanel; q++)
            {
                int width = panel.Width(q);
                int firstPanelColumn = q * CentroidPanel.PanelColumns;
                float* block = panelStart + panel.Offset(q);

                // Panel widths are multiples of 16, so each column step is exactly two Vector256.
                for (int c = 0; c < width; c += Columns256 * Vector256<float>.Count)
                {
                    int firstColumn = firstPanelColumn + c;
                    int columnsLeft = panel.K - firstColumn;
                    if (columnsLeft <= 0)
                    {
                        break;
                    }

                    int i = 0;
                    for (; i + Rows256 <= n; i += Rows256)
                    {
                        Tile256<Four, Two>(rowsStart + (nint)i * d, d, block + c, width, scoresStart + (nint)i * stride + firstColumn, stride, columnsLeft);
                    }

                    switch (n - i)
                    {
                        case 3: Tile256<Three, Two>(rowsStart + (nint)i * d, d, block + c, width, scoresStart + (nint)i * stride + firstColumn, stride, columnsLeft); break;
                        case 2: Tile256<Two, Two>(rowsStart + (nint)i * d, d, block + c, width, scoresStart + (nint)i * stride + firstColumn, stride, columnsLeft); break;
                        case 1: Tile256<One, Two>(rowsStart + (nint)i * d, d, block + c, width, scoresStart + (nint)i * stride + firstColumn, stride, columnsLeft); break;
                    }
                }
            }
        }
    }

    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static unsafe void Tile512ForWidth<TRows>(int vectors, float* rows, int d, float* panel, int width, float* scores, int stride, int columnsLeft)
        where TRows : struct, IConstant
    {
        switch (vectors)
        {
            case 4: Tile512<TRows, Four>(rows, d, panel, width, scores, stride, columnsLeft); break;
            case 3: Tile512<TRows, Three>(rows, d, panel, width, scores, stride, columnsLeft); break;
            case 2: Tile512<TRows, Two>(rows, d, panel, width, scores, stride, columnsLeft); break;
            default: Tile512<TRows, One>(rows, d, panel, width, scores, stride, columnsLeft); break;
        }
    }

    /// <summary>
    /// One register tile: TRows (≤ 6) rows × TColumns (≤ 4) vectors of 16 centroids, 24 accumulators.
    /// Per dimension p: TColumns loads from the panel, one broadcast per row, TRows × TColumns FMAs.
    /// </summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static unsafe void Tile512<TRows, TColumns>(float* rows, int d, float* panel, int width, float* scores, int stride, int columnsLeft)
        where TRows : struct, IConstant
        where TColumns : struct, IConstant
    {
        Vector512<float> a00 = default, a01 = default, a02 = default, a03 = default;
        Vector512<float> a10 = default, a11 = default, a12 = default, a13 = default;
        Vector512<float> a20 = default, a21 = default, a22 = default, a23 = default;
        Vector512<float> a30 = default, a31 = default, a32 = default, a33 = default;
        Vector512<float> a40 = default, a41 = default, a42 = default, a43 = default;
        Vector512<float> a50 = default, a51 = default, a52 = default, a53 = default;
        float* row1 = rows + 1 * (nint)d;
        float* row2 = rows + 2 * (nint)d;
        float* row3 = rows + 3 * (nint)d;
        float* row4 = rows + 4 * (nint)d;
        float* row5 = rows + 5 * (nint)d;
        for (int p = 0; p < d; p++)
        {
            float* b = panel + (nint)p * width;
            Vector512<float> b0 = Vector512.Load(b);
            Vector512<float> b1 = TColumns.Value > 1 ? Vector512.Load(b + 16) : default;
            Vector512<float> b2 = TColumns.Value > 2 ? Vector512.Load(b + 32) : default;
            Vector512<float> b3 = TColumns.Value > 3 ? Vector512.Load(b + 48) : default;
            Vector512<float> x0 = Vector512.Create(rows[p]);
            a00 = Vector512.FusedMultiplyAdd(x0, b0, a00);
            if (TColumns.Value > 1) { a01 = Vector512.FusedMultiplyAdd(x0, b1, a01); }
            if (TColumns.Value > 2) { a02 = Vector512.FusedMultiplyAdd(x0, b2, a02); }
            if (TColumns.Value > 3) { a03 = Vector512.FusedMultiplyAdd(x0, b3, a03); }
            if (TRows.Value > 1)
            {
                Vector512<float> x = Vector512.Create(row1[p]);
                a10 = Vector512.FusedMultiplyAdd(x, b0, a10);
                if (TColumns.Value > 1) { a11 = Vector512.FusedMultiplyAdd(x, b1, a11); }
                if (TColumns.Value > 2) { a12 = Vector512.FusedMultiplyAdd(x, b2, a12); }
                if (TColumns.Value > 3) { a13 = Vector512.FusedMultiplyAdd(x, b3, a13); }
            }
            if (TRows.Value > 2)
            {
                Vector512<float> x = Vector512.Create(row2[p]);
                a20 = Vector512.FusedMultiplyAdd(x, b0, a20);
                if (TColumns.Value > 1) { a21 = Vector512.FusedMultiplyAdd(x, b1, a21); }
                if (TColumns.Value > 2) { a22 = Vector512.FusedMultiplyAdd(x, b2, a22); }
                if (TColumns.Value > 3) { a23 = Vector512.FusedMultiplyAdd(x, b3, a23); }
            }
            if (TRows.Value > 3)
            {
                Vector512<float> x = Vector512.Create(row3[p]);
                a30 = Vector512.FusedMultiplyAdd(x, b0, a30);
                if (TColumns.Value > 1) { a31 = Vector512.FusedMultiplyAdd(x, b1, a31); }
                if (TColumns.Value > 2) { a32 = Vector512.FusedMultiplyAdd(x, b2, a32); }
                if (TColumns.Value > 3) { a33 = Vector512.FusedMultiplyAdd(x, b3, a33); }
            }
            if (TRows.Value > 4)
            {
                Vector512<float> x = Vector512.Create(row4[p]);
                a40 = Vector512.FusedMultiplyAdd(x, b0, a40);
                if (TColumns.Value > 1) { a41 = Vector512.FusedMultiplyAdd(x, b1, a41); }
                if (TColumns.Value > 2) { a42 = Vector512.FusedMultiplyAdd(x, b2, a42); }
                if (TColumns.Value > 3) { a43 = Vector512.FusedMultiplyAdd(x, b3, a43); }
            }
            if (TRows.Value > 5)
            {
                Vector512<float> x = Vector512.Create(row5[p]);
                a50 = Vector512.FusedMultiplyAdd(x, b0, a50);
                if (TColumns.Value > 1) { a51 = Vector512.FusedMultiplyAdd(x, b1, a51); }
                if (TColumns.Value > 2) { a52 = Vector512.FusedMultiplyAdd(x, b2, a52); }
                if (TColumns.Value > 3) { a53 = Vector512.FusedMultiplyAdd(x, b3, a53); }
            }
        }

        float* s0 = scores + (nint)0 * stride;
        Store512(a00, s0, columnsLeft);
        if (TColumns.Value > 1) { Store512(a01, s0 + 16, columnsLeft - 16); }
        if (TColumns.Value > 2) { Store512(a02, s0 + 32, columnsLeft - 32); }
        if (TColumns.Value > 3) { Store512(a03, s0 + 48, columnsLeft - 48); }
        if (TRows.Value > 1)
        {
            float* s1 = scores + (nint)1 * stride;
            Store512(a10, s1, columnsLeft);
            if (TColumns.Value > 1) { Store512(a11, s1 + 16, columnsLeft - 16); }
            if (TColumns.Value > 2) { Store512(a12, s1 + 32, columnsLeft - 32); }
            if (TColumns.Value > 3) { Store512(a13, s1 + 48, columnsLeft - 48); }
        }
        if (TRows.Value > 2)
        {
            float* s2 = scores + (nint)2 * stride;
            Store512(a20, s2, columnsLeft);
            if (TColumns.Value > 1) { Store512(a21, s2 + 16, columnsLeft - 16); }
            if (TColumns.Value > 2) { Store512(a22, s2 + 32, columnsLeft - 32); }
            if (TColumns.Value > 3) { Store512(a23, s2 + 48, columnsLeft - 48); }
        }
        if (TRows.Value > 3)
        {
            float* s3 = scores + (nint)3 * stride;
            Store512(a30, s3, columnsLeft);
            if (TColumns.Value > 1) { Store512(a31, s3 + 16, columnsLeft - 16); }
            if (TColumns.Value > 2) { Store512(a32, s3 + 32, columnsLeft - 32); }
            if (TColumns.Value > 3) { Store512(a33, s3 + 48, columnsLeft - 48); }
        }
        if (TRows.Value > 4)
        {
            float* s4 = scores + (nint)4 * stride;
            Store512(a40, s4, columnsLeft);
            if (TColumns.Value > 1) { Store512(a41, s4 + 16, columnsLeft - 16); }
            if (TColumns.Value > 2) { Store512(a42, s4 + 32, columnsLeft - 32); }
            if (TColumns.Value > 3) { Store512(a43, s4 + 48, columnsLeft - 48); }
        }
        if (TRows.Value > 5)
        {
            float* s5 = scores + (nint)5 * stride;
            Store512(a50, s5, columnsLeft);
            if (TColumns.Value > 1) { Store512(a51, s5 + 16, columnsLeft - 16); }
            if (TColumns.Value > 2) { Store512(a52, s5 + 32, columnsLeft - 32); }
            if (TColumns.Value > 3) { Store512(a53, s5 + 48, columnsLeft - 48); }
        }
    }

    /// <summary>
    /// One register tile: TRows (≤ 4) rows × TColumns (≤ 2) vectors of 8 centroids, 8 accumulators.
    /// Per dimension p: TColumns loads from the panel, one broadcast per row, TRows × TColumns FMAs.
    /// </summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static unsafe void Tile256<TRows, TColumns>(float* rows, int d, float* panel, int width, float* scores, int stride, int columnsLeft)
        where TRows : struct, IConstant
        where TColumns : struct, IConstant
    {
        Vector256<float> a00 = default, a01 = default;
        Vector256<float> a10 = default, a11 = default;
        Vector256<float> a20 = default, a21 = default;
        Vector256<float> a30 = default, a31 = default;
        float* row1 = rows + 1 * (nint)d;
        float* row2 = rows + 2 * (nint)d;
        float* row3 = rows + 3 * (nint)d;
        for (int p = 0; p < d; p++)
        {
            float* b = panel + (nint)p * width;
            Vector256<float> b0 = Vector256.Load(b);
            Vector256<float> b1 = TColumns.Value > 1 ? Vector256.Load(b + 8) : default;
            Vector256<float> x0 = Vector256.Create(rows[p]);
            a00 = Vector256.FusedMultiplyAdd(x0, b0, a00);
            if (TColumns.Value > 1) { a01 = Vector256.FusedMultiplyAdd(x0, b1, a01); }
            if (TRows.Value > 1)
            {
                Vector256<float> x = Vector256.Create(row1[p]);
                a10 = Vector256.FusedMultiplyAdd(x, b0, a10);
                if (TColumns.Value > 1) { a11 = Vector256.FusedMultiplyAdd(x, b1, a11); }
            }
            if (TRows.Value > 2)
            {
                Vector256<float> x = Vector256.Create(row2[p]);
                a20 = Vector256.FusedMultiplyAdd(x, b0, a20);
                if (TColumns.Value > 1) { a21 = Vector256.FusedMultiplyAdd(x, b1, a21); }
            }
            if (TRows.Value > 3)
            {
                Vector256<float> x = Vector256.Create(row3[p]);
                a30 = Vector256.FusedMultiplyAdd(x, b0, a30);
                if (TColumns.Value > 1) { a31 = Vector256.FusedMultiplyAdd(x, b1, a31); }
            }
        }

        float* s0 = scores + (nint)0 * stride;
        Store256(a00, s0, columnsLeft);
        if (TColumns.Value > 1) { Store256(a01, s0 + 8, columnsLeft - 8); }
        if (TRows.Value > 1)
        {
            float* s1 = scores + (nint)1 * stride;
            Store256(a10, s1, columnsLeft);
            if (TColumns.Value > 1) { Store256(a11, s1 + 8, columnsLeft - 8); }
        }
        if (TRows.Value > 2)
        {
            float* s2 = scores + (nint)2 * stride;
            Store256(a20, s2, columnsLeft);
            if (TColumns.Value > 1) { Store256(a21, s2 + 8, columnsLeft - 8); }
        }
        if (TRows.Value > 3)
        {
            float* s3 = scores + (nint)3 * stride;
            Store256(a30, s3, columnsLeft);
            if (TColumns.Value > 1) { Store256(a31, s3 + 8, columnsLeft - 8); }
        }
    }


    /// <summary>Stores the first min(16, columnsLeft) lanes; nothing when columnsLeft ≤ 0 (padding columns).</summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    private static unsafe void Store512(Vector512<float> values, float* destination, int columnsLeft)
    {
        if (columnsLeft >= Vector512<float>.Count)
        {
            values.Store(destination);
            return;
        }

        for (int t = 0; t < columnsLeft; t++)
        {
            destination[t] = values.GetElement(t);
        }
    }

    /// <summary>Stores the first min(8, columnsLeft) lanes; nothing when columnsLeft ≤ 0 (padding columns).</summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    private static unsafe void Store256(Vector256<float> values, float* destination, int columnsLeft)
    {
        if (columnsLeft >= Vector256<float>.Count)
        {
            values.Store(destination);
            return;
        }

        for (int t = 0; t < columnsLeft; t++)
        {
            destination[t] = values.GetElement(t);
        }
    }

    private static (int N, int K) CheckShapes(ReadOnlySpan<float> rows, ReadOnlySpan<float> centroids, int d, Span<float> scores)
    {
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(d);
        if (rows.Length % d != 0)
        {
            throw new ArgumentException($"rows has {rows.Length} values, not a multiple of d = {d}.", nameof(rows));
        }

        if (centroids.Length % d != 0)
        {
            throw new ArgumentException($"centroids has {centroids.Length} values, not a multiple of d = {d}.", nameof(centroids));
        }

        int n = rows.Length / d;
        int k = centroids.Length / d;
        if (scores.Length < (long)n * k)
        {
            throw new ArgumentException(
                $"scores has room for {scores.Length} values but {n} rows × {k} centroids need {(long)n * k}.", nameof(scores));
        }

        return (n, k);
    }

    private static int CheckPacked(ReadOnlySpan<float> rows, CentroidPanel panel, Span<float> scores, int stride)
    {
        ArgumentNullException.ThrowIfNull(panel);
        int d = panel.D;
        if (rows.Length % d != 0)
        {
            throw new ArgumentException($"rows has {rows.Length} values, not a multiple of d = {d}.", nameof(rows));
        }

        if (stride < panel.K)
        {
            throw new ArgumentOutOfRangeException(nameof(stride), stride, $"stride must be at least k = {panel.K}.");
        }

        int n = rows.Length / d;
        long needed = n == 0 ? 0 : (long)(n - 1) * stride + panel.K;
        if (scores.Length < needed)
        {
            throw new ArgumentException(
                $"scores has room for {scores.Length} values but {n} rows at stride {stride} need {needed}.", nameof(scores));
        }

        return n;
    }

    /// <summary>A compile-time count: the JIT specialises a tile per struct type and folds the branches on Value.</summary>
    internal interface IConstant
    {
        static abstract int Value { get; }
    }

    internal readonly struct One : IConstant { public static int Value => 1; }

    internal readonly struct Two : IConstant { public static int Value => 2; }

    internal readonly struct Three : IConstant { public static int Value => 3; }

    internal readonly struct Four : IConstant { public static int Value => 4; }

    internal readonly struct Five : IConstant { public static int Value => 5; }

    internal readonly struct Six : IConstant { public static int Value => 6; }
}
