using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.Vectors;

public sealed class RowNormalisationTests
{
    [Fact]
    public void NormaliseInPlace_OrdinaryRows_UnitLengthSameDirection()
    {
        var matrix = new EmbeddingMatrix([3f, 4f, 0f, -2f, 0f, 0f], rows: 2, dimensions: 3);

        RowNormalisation.NormaliseInPlace(matrix);

        Assert.Equal([0.6f, 0.8f, 0f, -1f, 0f, 0f], matrix.Values);
    }

    [Theory]
    [InlineData(1e25f)]
    [InlineData(1e37f)]
    [InlineData(1e-25f)]
    [InlineData(1e-44f)]
    public void NormaliseInPlace_SquaredLengthOutOfFloatRange_StillUnitLength(float scale)
    {
        var matrix = new EmbeddingMatrix([3f * scale, 4f * scale], rows: 1, dimensions: 2);

        RowNormalisation.NormaliseInPlace(matrix);

        Assert.Equal(0.6f, matrix.Values[0], 5);
        Assert.Equal(0.8f, matrix.Values[1], 5);
    }

    [Fact]
    public void NormaliseInPlace_ZeroRow_ThrowsNamingTheRowAndLeavesDataAlone()
    {
        float[] values = [1f, 2f, 0f, 0f, 5f, 6f];
        var matrix = new EmbeddingMatrix(values, rows: 3, dimensions: 2);

        ArgumentException error = Assert.Throws<ArgumentException>(() => RowNormalisation.NormaliseInPlace(matrix));

        Assert.StartsWith("Row 1 is all zeros", error.Message);
        Assert.Equal([1f, 2f, 0f, 0f, 5f, 6f], values);
    }

    [Theory]
    [InlineData(float.NaN)]
    [InlineData(float.PositiveInfinity)]
    [InlineData(float.NegativeInfinity)]
    public void NormaliseInPlace_NonFiniteValue_ThrowsNamingRowAndPosition(float bad)
    {
        var matrix = new EmbeddingMatrix([1f, 2f, 3f, 4f, 5f, bad], rows: 3, dimensions: 2);

        ArgumentException error = Assert.Throws<ArgumentException>(() => RowNormalisation.NormaliseInPlace(matrix));

        Assert.StartsWith("Row 2 has a non-finite value", error.Message);
        Assert.Contains("at position 1", error.Message);
        Assert.Equal("matrix", error.ParamName);
    }

    [Fact]
    public void NormaliseInPlace_ManyBlocksTwoBadRows_NamesTheFirstAndLeavesDataAlone()
    {
        // 5,000 rows span several parallel blocks; the later bad row's block may finish first.
        var random = new Random(3);
        float[] values = Enumerable.Range(0, 5000 * 4).Select(_ => (float)random.NextDouble() + 0.1f).ToArray();
        values[4321 * 4 + 2] = float.NaN;
        values[2100 * 4 + 0] = values[2100 * 4 + 1] = values[2100 * 4 + 2] = values[2100 * 4 + 3] = 0f;
        float[] before = values.ToArray();
        var matrix = new EmbeddingMatrix(values, rows: 5000, dimensions: 4);

        ArgumentException error = Assert.Throws<ArgumentException>(() => RowNormalisation.NormaliseInPlace(matrix));

        Assert.StartsWith("Row 2100 is all zeros", error.Message);
        Assert.Equal(before, values);
    }

    [Fact]
    public void NormaliseInPlace_ManyBlocks_EveryRowUnitLength()
    {
        var random = new Random(4);
        float[] values = Enumerable.Range(0, 3000 * 7).Select(_ => (float)(random.NextDouble() - 0.5) * 40f).ToArray();
        var matrix = new EmbeddingMatrix(values, rows: 3000, dimensions: 7);

        RowNormalisation.NormaliseInPlace(matrix);

        for (int i = 0; i < matrix.Rows; i++)
        {
            double length = Math.Sqrt(matrix.Row(i).ToArray().Sum(v => (double)v * v));
            Assert.InRange(length, 1 - 1e-6, 1 + 1e-6);
        }
    }

    [Fact]
    public void FindInvalidRow_AllValid_Null()
    {
        var matrix = new EmbeddingMatrix([1f, 0f, 0f, -1f], rows: 2, dimensions: 2);

        Assert.Null(RowNormalisation.FindInvalidRow(matrix, out string? reason));
        Assert.Null(reason);
    }
}
