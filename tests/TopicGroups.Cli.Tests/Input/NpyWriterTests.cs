using TopicGroups.Cli.Input;
using TopicGroups.Cli.Tests.TestSupport;

namespace TopicGroups.Cli.Tests.Input;

public sealed class NpyWriterTests : IDisposable
{
    private readonly TempDirectory _directory = new();

    public void Dispose() => _directory.Dispose();

    [Fact]
    public void Write_Float32Matrix_ByteForByteWhatNumpySaveWrites()
    {
        // Reference: numpy 1.24.2, numpy.save of arange(6, dtype='<f4').reshape(2, 3) / 4 (NumpyFixtures).
        var stream = new MemoryStream();

        NpyWriter.Write(stream, [0f, 0.25f, 0.5f, 0.75f, 1f, 1.25f], rows: 2, columns: 3);

        Assert.Equal(NumpyFixtures.Float32TwoByThree, Convert.ToHexString(stream.ToArray()).ToLowerInvariant());
    }

    [Theory]
    [InlineData(1, 1)]
    [InlineData(3, 384)]
    [InlineData(1000, 7)]
    [InlineData(0, 5)]
    public void Write_ThenRead_SameShapeAndValues(int rows, int columns)
    {
        var random = new Random(rows * 31 + columns);
        float[] values = new float[rows * columns];
        for (int i = 0; i < values.Length; i++)
        {
            values[i] = (float)(random.NextDouble() * 2 - 1);
        }

        if (values.Length > 0)
        {
            values[^1] = float.Epsilon; // a subnormal survives the round trip bit for bit
        }

        string path = _directory.File($"m{rows}x{columns}.npy");

        NpyWriter.Write(path, values, rows, columns);
        float[] read = NpyReader.ReadAll(path, out int readRows, out int readColumns);

        Assert.Equal((rows, columns), (readRows, readColumns));
        Assert.Equal(values, read);
        Assert.Equal(0, (new FileInfo(path).Length - (long)values.Length * sizeof(float)) % 64); // data starts 64-aligned
    }

    [Fact]
    public void Write_WrongLength_Throws()
    {
        Assert.Throws<ArgumentException>(() => NpyWriter.Write(new MemoryStream(), new float[5], rows: 2, columns: 3));
    }
}
