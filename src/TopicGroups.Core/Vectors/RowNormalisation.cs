using System.Numerics.Tensors;

namespace TopicGroups.Core.Vectors;

/// <summary>Scales every row to unit L2 length so that a dot product is a cosine.</summary>
/// <remarks>
/// One read pass computes every row's length on all cores (a finite, positive length proves the row finite and
/// not all zero, so the exact element-by-element check runs only for the rare rows where it does not), then one
/// pass divides. Rows are independent, so the result does not depend on the thread count.
/// </remarks>
public static class RowNormalisation
{
    /// <summary>Rows per parallel work item.</summary>
    private const int BlockRows = 1024;

    /// <summary>
    /// Normalises each row in place. Throws <see cref="ArgumentException"/> naming the first row whose
    /// values are not all finite or are all zero: such a row has no direction to compare. Nothing is
    /// changed when it throws. Rows whose squared length over- or underflows float32 (values near 1e19 or
    /// 1e-19) are first scaled by their largest magnitude, so any finite non-zero row is accepted.
    /// </summary>
    public static void NormaliseInPlace(EmbeddingMatrix matrix)
    {
        ArgumentNullException.ThrowIfNull(matrix);
        float[] norms = new float[matrix.Rows];
        ComputeNorms(matrix, norms);
        if (FirstInvalid(matrix, norms, out string? reason) is int row)
        {
            throw new ArgumentException($"Row {row} {reason}; give every row at least one non-zero value and no NaN or infinity.", nameof(matrix));
        }

        ForEachBlock(matrix.Rows, (from, to) =>
        {
            for (int i = from; i < to; i++)
            {
                Span<float> values = matrix.Row(i);
                float norm = norms[i];
                if (!IsUsable(norm))
                {
                    DotProduct.Divide(values, TensorPrimitives.MaxMagnitude(values));
                    norm = DotProduct.Norm(values);
                }

                DotProduct.Divide(values, norm);
            }
        });
    }

    /// <summary>The first row that cannot be normalised, with the reason, or null when all can.</summary>
    public static int? FindInvalidRow(EmbeddingMatrix matrix, out string? reason)
    {
        ArgumentNullException.ThrowIfNull(matrix);
        float[] norms = new float[matrix.Rows];
        ComputeNorms(matrix, norms);
        return FirstInvalid(matrix, norms, out reason);
    }

    /// <summary>A length that proves its row finite and not all zero, and that dividing by it is accurate.</summary>
    private static bool IsUsable(float norm) => float.IsFinite(norm) && norm >= 1e-18f;

    private static void ComputeNorms(EmbeddingMatrix matrix, float[] norms) =>
        ForEachBlock(matrix.Rows, (from, to) =>
        {
            for (int i = from; i < to; i++)
            {
                norms[i] = DotProduct.Norm(matrix.Row(i));
            }
        });

    /// <summary>Checks, in row order, only the rows whose length did not vouch for them.</summary>
    private static int? FirstInvalid(EmbeddingMatrix matrix, float[] norms, out string? reason)
    {
        for (int i = 0; i < matrix.Rows; i++)
        {
            if (IsUsable(norms[i]))
            {
                continue;
            }

            Span<float> values = matrix.Row(i);
            bool anyNonZero = false;
            for (int j = 0; j < values.Length; j++)
            {
                if (!float.IsFinite(values[j]))
                {
                    reason = $"has a non-finite value ({values[j]}) at position {j}";
                    return i;
                }

                anyNonZero |= values[j] != 0f;
            }

            if (!anyNonZero)
            {
                reason = "is all zeros";
                return i;
            }
        }

        reason = null;
        return null;
    }

    private static void ForEachBlock(int rows, Action<int, int> body)
    {
        int blocks = (rows + BlockRows - 1) / BlockRows;
        if (blocks <= 1)
        {
            body(0, rows);
            return;
        }

        Parallel.For(0, blocks, block => body(block * BlockRows, Math.Min(rows, (block + 1) * BlockRows)));
    }
}
