using System.Numerics.Tensors;

namespace TopicGroups.Core.Vectors;

/// <summary>
/// Scores a block of rows against every centroid: scores[i * k + j] = dot(rows[i], centroids[j]).
/// rows: n × d, centroids: k × d, scores: n × k, all row-major. With unit rows a score is a cosine.
/// </summary>
internal static class BlockScores
{
    public static void Compute(ReadOnlySpan<float> rows, ReadOnlySpan<float> centroids, int d, Span<float> scores)
    {
        (int n, int k) = CheckShapes(rows, centroids, d, scores);
        for (int i = 0; i < n; i++)
        {
            ReadOnlySpan<float> row = rows.Slice(i * d, d);
            for (int j = 0; j < k; j++)
            {
                scores[i * k + j] = TensorPrimitives.Dot(row, centroids.Slice(j * d, d));
            }
        }
    }

    /// <summary>The plain triple loop: the definition every faster path is tested against.</summary>
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
}
