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
/// With a <see cref="BatchArrayPool"/>, the matrix's array is lent by the pool (it may be longer than the batch:
/// the matrix then covers its first rows) and goes back with <see cref="Release"/>.
/// </summary>
internal sealed class EmbeddingIntake
{
    /// <summary>Size of a segment when the batch size is not known: small next to a batch, large next to a row.</summary>
    private const int SegmentBytes = 4 * 1024 * 1024;

    private readonly int _dimensions;
    private readonly BatchArrayPool? _pool;
    private float[]? _reserved;                  // the whole matrix, when the row count was known (may be longer)
    private readonly int _reservedRows;
    private float[]? _joined;                    // the matrix ToMatrix built by copying, when it came from the pool
    private readonly List<(float[] Values, int Rows)> _segments = [];
    private float[]? _segment;                   // the segment being filled (no reservation)
    private int _segmentRows;

    /// <param name="dimensions">Values per row.</param>
    /// <param name="expectedRows">Rows the batch will have, or 0 when not known.</param>
    /// <param name="pool">Lends the matrix's array; null allocates a new one.</param>
    public EmbeddingIntake(int dimensions, int expectedRows, BatchArrayPool? pool = null)
    {
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(dimensions);
        ArgumentOutOfRangeException.ThrowIfNegative(expectedRows);
        _dimensions = dimensions;
        _pool = pool;
        if (expectedRows > 0)
        {
            int values = checked(expectedRows * dimensions);
            _reserved = pool?.Rent(values) ?? new float[values];
            _reservedRows = expectedRows;
        }
    }

    /// <summary>Rows taken so far.</summary>
    public int Rows { get; private set; }

    /// <summary>Rows the reservation holds; 0 without one.</summary>
    public int ReservedRows => _reservedRows;

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
            return EmbeddingMatrix.OverPrefix(_reserved, Rows, _dimensions);   // a lent array may be longer
        }

        int length = checked(Rows * _dimensions);
        float[] values = _pool?.Rent(length) ?? new float[length];
        _joined = _pool is null ? null : values;
        if (_reserved is not null)
        {
            _reserved.AsSpan(0, length).CopyTo(values);
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

        return EmbeddingMatrix.OverPrefix(values, Rows, _dimensions);
    }

    /// <summary>
    /// Gives the pool back the arrays it lent (the reservation, the joined matrix). Call once nothing reads the
    /// matrix any more: after the grouping stopped and its reply was built, or when the request failed. A second
    /// call does nothing.
    /// </summary>
    public void Release()
    {
        if (_pool is null)
        {
            return;
        }

        if (_reserved is float[] reserved)
        {
            _reserved = null;
            _pool.Return(reserved);
        }

        if (_joined is float[] joined)
        {
            _joined = null;
            _pool.Return(joined);
        }
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
