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

    /// <summary>
    /// Recomputes every centroid from the current assignments and returns the objective for them:
    /// Σ_c ‖s_c‖ / n, which equals the mean cosine of each row to its new centroid because
    /// Σ_{i ∈ c} x_i · s_c / ‖s_c‖ = ‖s_c‖. Sums are float64, each group's in ascending row order,
    /// so the result is the same for any thread count. GroupSizes must be current and no group empty.
    /// </summary>
    public static double Update(ClusteringWorkspace ws)
    {
        int k = ws.K;
        int[] start = ws.MemberStart;
        start[0] = 0;
        for (int c = 0; c < k; c++)
        {
            start[c + 1] = start[c] + ws.GroupSizes[c];
        }

        // Counting sort of rows by group, keeping ascending row order within each group.
        int[] cursor = ws.MemberCursor;
        Array.Copy(start, cursor, k);
        for (int i = 0; i < ws.N; i++)
        {
            ws.MemberOrder[cursor[ws.Assignments[i]]++] = i;
        }

        ws.Blocks.ForEach(k, (c, _) => UpdateGroup(ws, c));

        double total = 0;
        for (int c = 0; c < k; c++)
        {
            total += ws.SumNorms[c];
        }

        return total / ws.N;
    }

    private static void UpdateGroup(ClusteringWorkspace ws, int c)
    {
        int d = ws.D;
        Span<double> sum = ws.Sums.AsSpan(c * d, d);
        sum.Clear();
        for (int m = ws.MemberStart[c]; m < ws.MemberStart[c + 1]; m++)
        {
            AddWidened(ws.Row(ws.MemberOrder[m]), sum);
        }

        double squared = 0;
        foreach (double value in sum)
        {
            squared += value * value;
        }

        double norm = Math.Sqrt(squared);
        ws.SumNorms[c] = norm;
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
            ws.Row(ws.MemberOrder[ws.MemberStart[c]]).CopyTo(centroid);
        }
    }

    /// <summary>sum[p] += row[p], widening float32 to float64.</summary>
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
