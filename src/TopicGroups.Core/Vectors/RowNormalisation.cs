using System.Numerics.Tensors;

namespace TopicGroups.Core.Vectors;

/// <summary>Scales every row to unit L2 length so that a dot product is a cosine.</summary>
public static class RowNormalisation
{
    /// <summary>
    /// Normalises each row in place. Throws <see cref="ArgumentException"/> naming the first row whose
    /// values are not all finite or are all zero: such a row has no direction to compare. Nothing is
    /// changed when it throws. Rows whose squared length over- or underflows float32 (values near 1e19 or
    /// 1e-19) are first scaled by their largest magnitude, so any finite non-zero row is accepted.
    /// </summary>
    public static void NormaliseInPlace(EmbeddingMatrix matrix)
    {
        ArgumentNullException.ThrowIfNull(matrix);
        int? badRow = FindInvalidRow(matrix, out string? reason);
        if (badRow is int row)
        {
            throw new ArgumentException($"Row {row} {reason}; give every row at least one non-zero value and no NaN or infinity.", nameof(matrix));
        }

        for (int i = 0; i < matrix.Rows; i++)
        {
            Span<float> values = matrix.Row(i);
            float norm = TensorPrimitives.Norm(values);
            if (!(norm > 0f) || !float.IsFinite(norm))
            {
                TensorPrimitives.Divide(values, TensorPrimitives.MaxMagnitude(values), values);
                norm = TensorPrimitives.Norm(values);
            }

            TensorPrimitives.Divide(values, norm, values);
        }
    }

    /// <summary>The first row that cannot be normalised, with the reason, or null when all can.</summary>
    public static int? FindInvalidRow(EmbeddingMatrix matrix, out string? reason)
    {
        ArgumentNullException.ThrowIfNull(matrix);
        for (int i = 0; i < matrix.Rows; i++)
        {
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
}
