using System.Buffers.Binary;
using System.Runtime.InteropServices;
using System.Text;

namespace TopicGroups.Cli.Input;

/// <summary>
/// Reads a two-dimensional .npy file (NPY format versions 1.0, 2.0 and 3.0, as specified in
/// NEP 1 / numpy.lib.format) row by row: shape (rows, columns), C order, little-endian float32
/// ('&lt;f4') or float64 ('&lt;f8', converted to float32). Anything else is rejected with an
/// <see cref="InputException"/> that names the file and the fix.
/// </summary>
internal sealed class NpyReader : IDisposable
{
    private const int MaxHeaderLength = 1 << 20;

    private readonly Stream _stream;
    private readonly string _fileName;
    private readonly byte[] _rowBytes;
    private int _rowsRead;

    private NpyReader(Stream stream, string fileName, NpyHeader header, int rows, int columns, int itemSize)
    {
        _stream = stream;
        _fileName = fileName;
        Header = header;
        Rows = rows;
        Columns = columns;
        _rowBytes = new byte[checked(columns * itemSize)];
    }

    public NpyHeader Header { get; }

    public int Rows { get; }

    public int Columns { get; }

    private bool IsFloat64 => Header.Descr == "<f8";

    /// <summary>Opens the file and checks its header and length; the data is read by <see cref="ReadRow"/>.</summary>
    public static NpyReader Open(string path)
    {
        string fileName = Path.GetFileName(path);
        Stream stream = InputFiles.OpenRead(path);
        try
        {
            return Open(stream, fileName);
        }
        catch
        {
            stream.Dispose();
            throw;
        }
    }

    /// <summary>Reads a header from <paramref name="stream"/>; <paramref name="fileName"/> is used in messages.</summary>
    public static NpyReader Open(Stream stream, string fileName)
    {
        NpyHeader header = ReadHeader(stream, fileName, out long dataOffset);

        if (header.Descr is not ("<f4" or "<f8"))
        {
            string hint = header.Descr is ">f4" or ">f8"
                ? "big-endian; convert with array.astype('<f4')"
                : "not supported; write float32 ('<f4')";
            throw new InputException($"{fileName}: dtype '{header.Descr}' is {hint}");
        }

        if (header.FortranOrder)
        {
            throw new InputException(
                $"{fileName}: fortran_order is True (column-major); save a C-ordered array, e.g. numpy.save(path, numpy.ascontiguousarray(array))");
        }

        if (header.Shape.Length != 2)
        {
            throw new InputException(
                $"{fileName}: shape {header.ShapeText} is not a matrix; expected (documents, dimensions), one row per document");
        }

        long rows = header.Shape[0];
        long columns = header.Shape[1];
        if (rows > int.MaxValue || columns > int.MaxValue || rows * columns > Array.MaxLength)
        {
            throw new InputException($"{fileName}: shape {header.ShapeText} is too large (at most {Array.MaxLength:N0} values)");
        }

        int itemSize = header.Descr == "<f8" ? sizeof(double) : sizeof(float);
        if (stream.CanSeek)
        {
            long expected = rows * columns * itemSize;
            long available = stream.Length - dataOffset;
            if (available < expected)
            {
                throw new InputException(
                    $"{fileName}: shape {header.ShapeText} needs {expected:N0} bytes of data but the file holds {available:N0}; the file looks truncated");
            }
        }

        return new NpyReader(stream, fileName, header, (int)rows, (int)columns, itemSize);
    }

    /// <summary>Reads the next row into <paramref name="destination"/> (length <see cref="Columns"/>).</summary>
    public void ReadRow(Span<float> destination)
    {
        if (destination.Length != Columns)
        {
            throw new ArgumentException($"destination has {destination.Length} values; rows have {Columns}", nameof(destination));
        }

        if (_rowsRead >= Rows)
        {
            throw new InvalidOperationException($"all {Rows} rows have been read");
        }

        try
        {
            _stream.ReadExactly(_rowBytes);
        }
        catch (EndOfStreamException)
        {
            throw new InputException($"{_fileName}: data ends in row {_rowsRead} of {Rows}; the file looks truncated");
        }

        _rowsRead++;
        if (IsFloat64)
        {
            for (int j = 0; j < destination.Length; j++)
            {
                destination[j] = (float)BinaryPrimitives.ReadDoubleLittleEndian(_rowBytes.AsSpan(j * sizeof(double)));
            }
        }
        else if (BitConverter.IsLittleEndian)
        {
            MemoryMarshal.Cast<byte, float>(_rowBytes).CopyTo(destination);
        }
        else
        {
            for (int j = 0; j < destination.Length; j++)
            {
                destination[j] = BinaryPrimitives.ReadSingleLittleEndian(_rowBytes.AsSpan(j * sizeof(float)));
            }
        }
    }

    /// <summary>Reads the whole matrix, row-major: value (i, j) is at i * columns + j.</summary>
    public static float[] ReadAll(string path, out int rows, out int columns)
    {
        using NpyReader reader = Open(path);
        rows = reader.Rows;
        columns = reader.Columns;
        float[] values = new float[(long)rows * columns];
        for (int i = 0; i < rows; i++)
        {
            reader.ReadRow(values.AsSpan(i * columns, columns));
        }

        return values;
    }

    public void Dispose() => _stream.Dispose();

    private static NpyHeader ReadHeader(Stream stream, string fileName, out long dataOffset)
    {
        // Layout (numpy.lib.format): magic (6 bytes), major, minor, header length (uint16 little-endian
        // in version 1.0, uint32 in 2.0 and 3.0), then the header text ending in '\n'.
        Span<byte> prefix = stackalloc byte[8];
        if (stream.ReadAtLeast(prefix, prefix.Length, throwOnEndOfStream: false) < prefix.Length
            || !prefix[..6].SequenceEqual(NpyHeader.Magic))
        {
            throw new InputException($"{fileName}: not a .npy file (it does not start with the bytes \\x93NUMPY); save embeddings with numpy.save");
        }

        byte major = prefix[6];
        byte minor = prefix[7];
        int lengthSize = major switch
        {
            1 => 2,
            2 or 3 => 4,
            _ => throw new InputException($"{fileName}: NPY format version {major}.{minor} is not supported (1.0, 2.0 and 3.0 are)"),
        };

        Span<byte> lengthBytes = stackalloc byte[4];
        stream.ReadExactly(lengthBytes[..lengthSize]);
        long headerLength = lengthSize == 2
            ? BinaryPrimitives.ReadUInt16LittleEndian(lengthBytes)
            : BinaryPrimitives.ReadUInt32LittleEndian(lengthBytes);
        if (headerLength > MaxHeaderLength)
        {
            throw new InputException($"{fileName}: header claims {headerLength:N0} bytes; the file is damaged");
        }

        byte[] headerBytes = new byte[headerLength];
        if (stream.ReadAtLeast(headerBytes, headerBytes.Length, throwOnEndOfStream: false) < headerBytes.Length)
        {
            throw new InputException($"{fileName}: the file ends inside its header; it looks truncated");
        }

        dataOffset = 8 + lengthSize + headerLength;
        Encoding encoding = major == 3 ? Encoding.UTF8 : Encoding.Latin1;
        string text = encoding.GetString(headerBytes).TrimEnd('\n', ' ', '\0');
        try
        {
            return NpyHeader.Parse(text);
        }
        catch (FormatException ex)
        {
            throw new InputException($"{fileName}: cannot read the header: {ex.Message}");
        }
    }
}
