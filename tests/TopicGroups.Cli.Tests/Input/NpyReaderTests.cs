using System.Buffers.Binary;
using TopicGroups.Cli.Input;
using TopicGroups.Cli.Tests.TestSupport;

namespace TopicGroups.Cli.Tests.Input;

// Reference files: NumpyFixtures (bytes written by numpy 1.24.2, the reference implementation of
// NEP 1 / numpy.lib.format). Error messages must name the file and say how to fix it.
public sealed class NpyReaderTests : IDisposable
{
    private readonly TempDirectory _directory = new();

    public void Dispose() => _directory.Dispose();

    [Fact]
    public void ReadAll_Float32FromNumpy_ShapeAndValuesInCOrder()
    {
        string path = _directory.WriteBytes("a.npy", NumpyFixtures.Bytes(NumpyFixtures.Float32TwoByThree));

        float[] values = NpyReader.ReadAll(path, out int rows, out int columns);

        Assert.Equal((2, 3), (rows, columns));
        Assert.Equal([0f, 0.25f, 0.5f, 0.75f, 1f, 1.25f], values); // arange(6) / 4, row by row
    }

    [Fact]
    public void ReadAll_Float64FromNumpy_ConvertedToNearestFloat32()
    {
        string path = _directory.WriteBytes("b.npy", NumpyFixtures.Bytes(NumpyFixtures.Float64TwoByTwo));

        float[] values = NpyReader.ReadAll(path, out int rows, out int columns);

        Assert.Equal((2, 2), (rows, columns));
        Assert.Equal(0.1f, values[0]);
        Assert.Equal(-2.5f, values[1]);
        Assert.Equal(float.PositiveInfinity, values[2]); // 3e40 overflows float32; the group command rejects it by row
        Assert.Equal(1f, values[3]);
    }

    [Fact]
    public void ReadAll_Version2Header_ReadsFourByteHeaderLength()
    {
        string path = _directory.WriteBytes("v2.npy", NumpyFixtures.Bytes(NumpyFixtures.Float32Version2));

        float[] values = NpyReader.ReadAll(path, out int rows, out int columns);

        Assert.Equal((1, 2), (rows, columns));
        Assert.Equal([1.5f, -2f], values);
    }

    [Fact]
    public void Open_Version3Header_ReadsUtf8Header()
    {
        // Version 3.0 differs from 2.0 only in allowing UTF-8 in the header (numpy.lib.format).
        byte[] bytes = NumpyFixtures.Bytes(NumpyFixtures.Float32Version2);
        bytes[6] = 3;
        string path = _directory.WriteBytes("v3.npy", bytes);

        float[] values = NpyReader.ReadAll(path, out _, out _);

        Assert.Equal([1.5f, -2f], values);
    }

    [Theory]
    [InlineData(NumpyFixtures.Int32TwoByTwo, "i4.npy: dtype '<i4' is not supported; write float32 ('<f4')")]
    [InlineData(NumpyFixtures.Float32BigEndian, "be.npy: dtype '>f4' is big-endian; convert with array.astype('<f4')")]
    [InlineData(NumpyFixtures.Float32OneDimension, "one.npy: shape (3,) is not a matrix; expected (documents, dimensions), one row per document")]
    [InlineData(NumpyFixtures.Float32FortranOrder, "f.npy: fortran_order is True (column-major); save a C-ordered array, e.g. numpy.save(path, numpy.ascontiguousarray(array))")]
    public void Open_UnsupportedArray_OneLineNamingFileAndFix(string hex, string expected)
    {
        string fileName = expected[..expected.IndexOf(':')];
        string path = _directory.WriteBytes(fileName, NumpyFixtures.Bytes(hex));

        var ex = Assert.Throws<InputException>(() => NpyReader.Open(path).Dispose());

        Assert.Equal(expected, ex.Message);
    }

    [Fact]
    public void Open_DataShorterThanShape_SaysTruncated()
    {
        byte[] bytes = NumpyFixtures.Bytes(NumpyFixtures.Float32TwoByThree);
        string path = _directory.WriteBytes("cut.npy", bytes[..^4]);

        var ex = Assert.Throws<InputException>(() => NpyReader.Open(path).Dispose());

        Assert.Equal("cut.npy: shape (2, 3) needs 24 bytes of data but the file holds 20; the file looks truncated", ex.Message);
    }

    [Fact]
    public void Open_NotNpy_SaysSo()
    {
        string path = _directory.WriteText("vectors.npy", "id,x,y\n1,0.5,0.5\n");

        var ex = Assert.Throws<InputException>(() => NpyReader.Open(path).Dispose());

        Assert.StartsWith("vectors.npy: not a .npy file", ex.Message);
    }

    [Fact]
    public void Open_MissingFile_NamesFileAndFullPath()
    {
        string path = _directory.File("absent.npy");

        var ex = Assert.Throws<InputException>(() => NpyReader.Open(path).Dispose());

        Assert.Equal($"absent.npy: file not found (looked for {path})", ex.Message);
    }

    [Fact]
    public void Open_UnknownVersion_NamesVersion()
    {
        byte[] bytes = NumpyFixtures.Bytes(NumpyFixtures.Float32TwoByThree);
        bytes[6] = 9;
        string path = _directory.WriteBytes("v9.npy", bytes);

        var ex = Assert.Throws<InputException>(() => NpyReader.Open(path).Dispose());

        Assert.Equal("v9.npy: NPY format version 9.0 is not supported (1.0, 2.0 and 3.0 are)", ex.Message);
    }

    [Fact]
    public void ReadRow_RowByRow_SameAsReadAll()
    {
        string path = _directory.WriteBytes("a.npy", NumpyFixtures.Bytes(NumpyFixtures.Float32TwoByThree));
        using NpyReader reader = NpyReader.Open(path);
        float[] row = new float[reader.Columns];

        reader.ReadRow(row);
        Assert.Equal([0f, 0.25f, 0.5f], row);
        reader.ReadRow(row);
        Assert.Equal([0.75f, 1f, 1.25f], row);
        Assert.Throws<InvalidOperationException>(() => reader.ReadRow(row));
    }

    [Fact]
    public void Open_HeaderLengthFieldIsLittleEndian_DataOffsetIsMultipleOf64()
    {
        // numpy.lib.format: the total of magic, version, length field and header is divisible by 64.
        byte[] bytes = NumpyFixtures.Bytes(NumpyFixtures.Float32TwoByThree);
        int headerLength = BinaryPrimitives.ReadUInt16LittleEndian(bytes.AsSpan(8));

        Assert.Equal(0, (10 + headerLength) % 64);
        Assert.Equal((byte)'\n', bytes[10 + headerLength - 1]);
    }
}
