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

    private EmbeddingMatrix(float[] buffer, int rows, int dimensions, bool prefixOfBuffer)
    {
        Values = buffer;
        Rows = rows;
        Dimensions = dimensions;
    }

    /// <summary>Row-major storage, Rows × Dimensions (longer only over a reused buffer, see OverPrefix).</summary>
    public float[] Values { get; }

    public int Rows { get; }

    public int Dimensions { get; }

    public Span<float> Row(int index) => Values.AsSpan(index * Dimensions, Dimensions);

    /// <summary>
    /// A matrix over the first rows × dimensions values of a buffer reused across calls (the Core's scratch, the
    /// server's pooled batch arrays), so Values may be longer than Rows × Dimensions; every reader goes by Rows and
    /// Dimensions, never Values.Length, and the values past the prefix are never read.
    /// </summary>
    public static EmbeddingMatrix OverPrefix(float[] buffer, int rows, int dimensions)
    {
        ArgumentNullException.ThrowIfNull(buffer);
        ArgumentOutOfRangeException.ThrowIfNegative(rows);
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(dimensions);
        if ((long)rows * dimensions > buffer.Length)
        {
            throw new ArgumentException(
                $"buffer has {buffer.Length} entries; rows × dimensions = {rows} × {dimensions} = {(long)rows * dimensions} do not fit.",
                nameof(buffer));
        }

        return new EmbeddingMatrix(buffer, rows, dimensions, prefixOfBuffer: true);
    }

    public static EmbeddingMatrix Allocate(int rows, int dimensions) =>
        new(new float[checked(rows * dimensions)], rows, dimensions);
}
