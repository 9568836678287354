using System.Runtime.CompilerServices;
using System.Runtime.Intrinsics;

namespace TopicGroups.Core.Clustering;

/// <summary>The update step: each centroid becomes the normalised mean (equivalently, sum) of its members.</summary>
internal static class CentroidUpdate
{
    /// <summary>Counts members per group (into workspace.GroupSizes).</summary>
    public static void CountSizes(ClusteringWorkspace ws)
    {
        Array.Clear(ws.GroupSizes);
        foreach (int group in ws.Assignments)
        {
            ws.GroupSizes[group]++;
        }
    }

    /// <summary>Dimensions per work item of the sum pass: 64 float64 sums per group stay in L1/L2 while rows stream by.</summary>
    private const int SliceWidth = 64;

    /// <summary>
    /// Recomputes every centroid from the current assignments and returns the objective for them:
    /// Σ_c ‖s_c‖ / n, which equals the mean cosine of each row to its new centroid because
    /// Σ_{i ∈ c} x_i · s_c / ‖s_c‖ = ‖s_c‖. The sums are float64 and split by dimension slices, each slice
    /// adding rows in ascending order, so every sum is formed in the same order for any thread count.
    /// GroupSizes must be current and no group empty.
    /// </summary>
    public static double Update(ClusteringWorkspace ws)
    {
        int k = ws.K;
        int d = ws.D;
        int slices = (d + SliceWidth - 1) / SliceWidth;
        ws.Blocks.ForEach(slices, (slice, _) => SumSlice(ws, slice));

        double total = 0;
        for (int c = 0; c < k; c++)
        {
            total += Normalise(ws, c);
        }

        return total / ws.N;
    }

    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static void SumSlice(ClusteringWorkspace ws, int slice)
    {
        int d = ws.D;
        int from = slice * SliceWidth;
        int width = Math.Min(SliceWidth, d - from);
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

    /// <summary>Writes centroid c = s_c / ‖s_c‖ and returns ‖s_c‖.</summary>
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

    /// <summary>sum[p] += row[p], widening float32 to float64.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    internal static void AddWidened(ReadOnlySpan<float> row, Span<double> sum)
    {
        int p = 0;
        if (Vector512.IsHardwareAccelerated)
        {
            for (; p <= row.Length - Vector512<float>.Count; p += Vector512<float>.Count)
            {
                (Vector512<double> lower, Vector512<double> upper) = Vector512.Widen(Vector512.Create(row.Slice(p)));
                (Vector512.Create<double>(sum.Slice(p)) + lower).CopyTo(sum.Slice(p));
                (Vector512.Create<double>(sum.Slice(p + Vector512<double>.Count)) + upper).CopyTo(sum.Slice(p + Vector512<double>.Count));
            }
        }
        else if (Vector256.IsHardwareAccelerated)
        {
            for (; p <= row.Length - Vector256<float>.Count; p += Vector256<float>.Count)
            {
                (Vector256<double> lower, Vector256<double> upper) = Vector256.Widen(Vector256.Create(row.Slice(p)));
                (Vector256.Create<double>(sum.Slice(p)) + lower).CopyTo(sum.Slice(p));
                (Vector256.Create<double>(sum.Slice(p + Vector256<double>.Count)) + upper).CopyTo(sum.Slice(p + Vector256<double>.Count));
            }
        }

        for (; p < row.Length; p++)
        {
            sum[p] += row[p];
        }
    }
}
