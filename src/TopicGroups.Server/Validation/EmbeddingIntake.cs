using System.Buffers.Binary;
using System.Numerics.Tensors;
using System.Runtime.InteropServices;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Server.Validation;

/// <summary>
/// Where a batch's embeddings go as they arrive, so that request messages can be dropped once read. When the
/// number of documents is known in advance (a unary request, or a stream whose chunk 0 gives document_count) the
/// batch's one row-major float[] is allocated at once and every row is copied straight into it; otherwise rows
/// go into segments of about <see cref="SegmentBytes"/> that <see cref="ToMatrix"/> joins once at the end.
/// </summary>
internal sealed class EmbeddingIntake
{
    /// <summary>Size of a segment when the batch size is not known: small next to a batch, large next to a row.</summary>
    private const int SegmentBytes = 4 * 1024 * 1024;

    private readonly int _dimensions;
    private readonly float[]? _reserved;        // the whole matrix, when the row count was known
    private readonly List<(float[] Values, int Rows)> _segments = [];
    private float[]? _segment;                   // the segment being filled (no reservation)
    private int _segmentRows;

    /// <param name="dimensions">Values per row.</param>
    /// <param name="expectedRows">Rows the batch will have, or 0 when not known.</param>
    public EmbeddingIntake(int dimensions, int expectedRows)
    {
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(dimensions);
        ArgumentOutOfRangeException.ThrowIfNegative(expectedRows);
        _dimensions = dimensions;
        if (expectedRows > 0)
        {
            _reserved = new float[checked(expectedRows * dimensions)];
        }
    }

    /// <summary>Rows taken so far.</summary>
    public int Rows { get; private set; }

    /// <summary>Rows the reservation holds; 0 without one.</summary>
    public int ReservedRows => _reserved is null ? 0 : _reserved.Length / _dimensions;

    /// <summary>Room for the next <paramref name="rows"/> rows, contiguous; the caller fills it.</summary>
    /// <exception cref="InvalidOperationException">More rows than reserved (the caller checks first).</exception>
    public Span<float> Take(int rows)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(rows);
        int values = checked(rows * _dimensions);
        Span<float> room;
        if (_reserved is not null)
        {
            if (Rows + rows > ReservedRows)
            {
                throw new InvalidOperationException($"{Rows + rows} rows taken but {ReservedRows} were reserved.");
            }

            room = _reserved.AsSpan(Rows * _dimensions, values);
        }
        else
        {
            if (_segment is null || (_segmentRows + rows) * _dimensions > _segment.Length)
            {
                CloseSegment();
                _segment = new float[Math.Max(values, SegmentBytes / sizeof(float) / _dimensions * _dimensions)];
            }

            room = _segment.AsSpan(_segmentRows * _dimensions, values);
            _segmentRows += rows;
        }

        Rows += rows;
        return room;
    }

    /// <summary>
    /// Copies float32 little-endian bytes (whole rows) into the next rows and returns them. The caller has checked
    /// that the length is a whole number of rows.
    /// </summary>
    public Span<float> TakePacked(ReadOnlySpan<byte> littleEndian)
    {
        int rows = littleEndian.Length / sizeof(float) / _dimensions;
        Span<float> room = Take(rows);
        littleEndian.CopyTo(MemoryMarshal.AsBytes(room));
        if (!BitConverter.IsLittleEndian)
        {
            Span<int> words = MemoryMarshal.Cast<float, int>(room);
            BinaryPrimitives.ReverseEndianness(words, words);
        }

        return room;
    }

    /// <summary>The batch as one matrix: the reservation itself when it is full, else one copy of the segments.</summary>
    public EmbeddingMatrix ToMatrix()
    {
        if (_reserved is not null && Rows == ReservedRows)
        {
            return new EmbeddingMatrix(_reserved, Rows, _dimensions);
        }

        var values = new float[checked(Rows * _dimensions)];
        if (_reserved is not null)
        {
            _reserved.AsSpan(0, values.Length).CopyTo(values);
        }
        else
        {
            CloseSegment();
            int offset = 0;
            foreach ((float[] segment, int rows) in _segments)
            {
                segment.AsSpan(0, rows * _dimensions).CopyTo(values.AsSpan(offset));
                offset += rows * _dimensions;
            }

            _segments.Clear();
        }

        return new EmbeddingMatrix(values, Rows, _dimensions);
    }

    /// <summary>
    /// True when every value of <paramref name="values"/> is finite: one vectorised pass, so that the exact,
    /// value-by-value check with its message runs only where this fails.
    /// </summary>
    public static bool AllFinite(ReadOnlySpan<float> values) => TensorPrimitives.IsFiniteAll(values);

    /// <summary>True when every value of the row is +0 or -0 (compared as bits: one vectorised pass).</summary>
    public static bool AllZero(ReadOnlySpan<float> row) =>
        MemoryMarshal.Cast<float, uint>(row).IndexOfAnyExcept(0u, 0x8000_0000u) < 0;

    private void CloseSegment()
    {
        if (_segment is not null && _segmentRows > 0)
        {
            _segments.Add((_segment, _segmentRows));
        }

        _segment = null;
        _segmentRows = 0;
    }
}
