namespace TopicGroups.Core.Vectors;

/// <summary>
/// A dense row-major float32 matrix: row i occupies Values[i * Dimensions .. (i + 1) * Dimensions).
/// The one copy of a batch's embeddings; the pipeline normalises it in place.
/// </summary>
public sealed class EmbeddingMatrix
{
    public EmbeddingMatrix(float[] values, int rows, int dimensions)
    {
        ArgumentNullException.ThrowIfNull(values);
        ArgumentOutOfRangeException.ThrowIfNegative(rows);
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(dimensions);
        if ((long)rows * dimensions != values.Length)
        {
            throw new ArgumentException(
                $"values has {values.Length} entries but rows × dimensions = {rows} × {dimensions} = {(long)rows * dimensions}.",
                nameof(values));
        }

        Values = values;
        Rows = rows;
        Dimensions = dimensions;
    }

    /// <summary>Row-major storage, Rows × Dimensions.</summary>
    public float[] Values { get; }

    public int Rows { get; }

    public int Dimensions { get; }

    public Span<float> Row(int index) => Values.AsSpan(index * Dimensions, Dimensions);

    public static EmbeddingMatrix Allocate(int rows, int dimensions) =>
        new(new float[checked(rows * dimensions)], rows, dimensions);
}
