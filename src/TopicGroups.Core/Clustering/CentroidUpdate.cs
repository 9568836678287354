using System.Runtime.CompilerServices;
using System.Runtime.Intrinsics;
using System.Runtime.Intrinsics.X86;

namespace TopicGroups.Core.Clustering;

/// <summary>The update step: each centroid becomes the normalised mean (equivalently, sum) of its members.</summary>
internal static class CentroidUpdate
{
    /// <summary>Counts members per group (into workspace.GroupSizes).</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public static void CountSizes(ClusteringWorkspace ws)
    {
        Array.Clear(ws.GroupSizes);
        foreach (int group in ws.Assignments)
        {
            ws.GroupSizes[group]++;
        }
    }

    /// <summary>Empties the sums: the next <see cref="Update"/> rebuilds them from every row.</summary>
    public static void Reset(ClusteringWorkspace ws)
    {
        Array.Fill(ws.SummedAssignments, -1);
    }

    /// <summary>
    /// Recomputes every centroid from the current assignments and returns the objective for them:
    /// Σ_c ‖s_c‖ / n, which equals the mean cosine of each row to its new centroid because
    /// Σ_{i ∈ c} x_i · s_c / ‖s_c‖ = ‖s_c‖. The sums s_c are float64 and kept between iterations: when at most
    /// half the rows changed group since they were last summed, only those rows move (subtracted from their old
    /// sum, added to their new one), which in late iterations touches a few hundred rows instead of all n;
    /// otherwise the sums are rebuilt from every row. Each thread owns a contiguous slice of the dimensions and
    /// walks rows in ascending order, so each sum element is formed in the same order however the dimensions
    /// are split: the result does not depend on the thread count. (Slices are one per thread, not narrow:
    /// narrow slices read each row in short strided pieces, which measured 4–6× slower than whole rows.)
    /// GroupSizes must be current and no group empty.
    /// </summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public static double Update(ClusteringWorkspace ws)
    {
        int k = ws.K;
        int d = ws.D;
        int[] assignments = ws.Assignments;
        int[] summed = ws.SummedAssignments;
        int changed = 0;
        bool anySummed = false;
        for (int i = 0; i < assignments.Length; i++)
        {
            changed += assignments[i] != summed[i] ? 1 : 0;
            anySummed |= summed[i] >= 0;
        }

        bool rebuild = !anySummed || 2L * changed > ws.N;
        if (rebuild || changed > 0)
        {
            const int alignment = 8;
            int slices = Math.Max(1, Math.Min(ws.Blocks.WorkerCount, d / alignment));
            int sliceWidth = (d + slices - 1) / slices;
            sliceWidth = (sliceWidth + alignment - 1) / alignment * alignment;
            slices = (d + sliceWidth - 1) / sliceWidth;
            ws.Blocks.ForEach(slices, (slice, _) =>
            {
                int from = slice * sliceWidth;
                int width = Math.Min(sliceWidth, d - from);
                if (rebuild)
                {
                    SumSlice(ws, from, width);
                }
                else
                {
                    MoveChangedRows(ws, from, width);
                }
            });
            assignments.CopyTo(summed, 0);
        }

        double total = 0;
        for (int c = 0; c < k; c++)
        {
            total += Normalise(ws, c);
        }

        return total / ws.N;
    }

    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static void SumSlice(ClusteringWorkspace ws, int from, int width)
    {
        int d = ws.D;
        double[] sums = ws.Sums;
        for (int c = 0; c < ws.K; c++)
        {
            sums.AsSpan(c * d + from, width).Clear();
        }

        float[] rows = ws.Rows;
        int[] assignments = ws.Assignments;
        for (int i = 0; i < ws.N; i++)
        {
            AddWidened(rows.AsSpan(i * d + from, width), sums.AsSpan(assignments[i] * d + from, width));
        }
    }

    /// <summary>Moves each row whose group changed since the last update from its old sum to its new one, in row order.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static void MoveChangedRows(ClusteringWorkspace ws, int from, int width)
    {
        int d = ws.D;
        double[] sums = ws.Sums;
        float[] rows = ws.Rows;
        int[] assignments = ws.Assignments;
        int[] summed = ws.SummedAssignments;
        for (int i = 0; i < ws.N; i++)
        {
            int now = assignments[i];
            int before = summed[i];
            if (now == before)
            {
                continue;
            }

            ReadOnlySpan<float> row = rows.AsSpan(i * d + from, width);
            if (before >= 0)
            {
                SubtractWidened(row, sums.AsSpan(before * d + from, width));
            }

            AddWidened(row, sums.AsSpan(now * d + from, width));
        }
    }

    /// <summary>Writes centroid c = s_c / ‖s_c‖ and returns ‖s_c‖.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static double Normalise(ClusteringWorkspace ws, int c)
    {
        int d = ws.D;
        ReadOnlySpan<double> sum = ws.Sums.AsSpan(c * d, d);
        double squared = 0;
        foreach (double value in sum)
        {
            squared += value * value;
        }

        double norm = Math.Sqrt(squared);
        Span<float> centroid = ws.Centroid(c);
        if (norm > 0)
        {
            double scale = 1.0 / norm;
            for (int p = 0; p < d; p++)
            {
                centroid[p] = (float)(sum[p] * scale);
            }
        }
        else
        {
            // Members cancel out exactly (e.g. x and −x): every unit vector gives them the same total
            // cosine, 0, so take the first member's direction to keep the centroid unit length.
            int firstMember = Array.IndexOf(ws.Assignments, c);
            ws.Row(firstMember).CopyTo(centroid);
        }

        return norm;
    }

    /// <summary>sum[p] += row[p], widening float32 to float64 (8 values per instruction with AVX-512, 4 with AVX).</summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    internal static void AddWidened(ReadOnlySpan<float> row, Span<double> sum) => AccumulateWidened<Plus>(row, sum);

    /// <summary>sum[p] −= row[p], widening float32 to float64.</summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    internal static void SubtractWidened(ReadOnlySpan<float> row, Span<double> sum) => AccumulateWidened<Minus>(row, sum);

    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    private static unsafe void AccumulateWidened<TSign>(ReadOnlySpan<float> row, Span<double> sum)
        where TSign : struct, ISign
    {
        if (sum.Length < row.Length)
        {
            throw new ArgumentException($"sum has {sum.Length} slots for {row.Length} values.", nameof(sum));
        }

        int length = row.Length;
        int p = 0;
        fixed (float* source = row)
        fixed (double* target = sum)
        {
            if (Avx512F.IsSupported)
            {
                for (; p + Vector256<float>.Count <= length; p += Vector256<float>.Count)
                {
                    Vector512<double> wide = Avx512F.ConvertToVector512Double(Vector256.Load(source + p));
                    (TSign.IsPlus ? Vector512.Load(target + p) + wide : Vector512.Load(target + p) - wide).Store(target + p);
                }
            }
            else if (Avx.IsSupported)
            {
                for (; p + Vector128<float>.Count <= length; p += Vector128<float>.Count)
                {
                    Vector256<double> wide = Avx.ConvertToVector256Double(Vector128.Load(source + p));
                    (TSign.IsPlus ? Vector256.Load(target + p) + wide : Vector256.Load(target + p) - wide).Store(target + p);
                }
            }

            for (; p < length; p++)
            {
                target[p] = TSign.IsPlus ? target[p] + source[p] : target[p] - source[p];
            }
        }
    }

    private interface ISign
    {
        static abstract bool IsPlus { get; }
    }

    private readonly struct Plus : ISign
    {
        public static bool IsPlus => true;
    }

    private readonly struct Minus : ISign
    {
        public static bool IsPlus => false;
    }
}
