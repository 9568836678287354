using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.Vectors;

// Tolerance policy: integer-valued inputs make every partial sum exact in float32, so those checks are exact;
// random floats are compared with a float64 reference within 1e-6 · d (rounding of a d-term float32 sum).
public sealed class DotProductTests
{
    public static TheoryData<int> Lengths => new() { 0, 1, 3, 7, 8, 9, 15, 16, 17, 31, 32, 33, 63, 64, 65, 100, 384, 385 };

    [Theory]
    [MemberData(nameof(Lengths))]
    public void Dot_IntegerValues_ExactAtEveryTailLength(int d)
    {
        var random = new Random(31 + d);
        float[] a = Enumerable.Range(0, d).Select(_ => (float)random.Next(-8, 9)).ToArray();
        float[] b = Enumerable.Range(0, d).Select(_ => (float)random.Next(-8, 9)).ToArray();
        float expected = 0;
        for (int p = 0; p < d; p++)
        {
            expected += a[p] * b[p];
        }

        Assert.Equal(expected, DotProduct.Dot(a, b));
    }

    [Theory]
    [MemberData(nameof(Lengths))]
    public void Dot_RandomFloats_WithinRoundingOfFloat64(int d)
    {
        var random = new Random(77 + d);
        float[] a = Enumerable.Range(0, d).Select(_ => (float)(random.NextDouble() - 0.5)).ToArray();
        float[] b = Enumerable.Range(0, d).Select(_ => (float)(random.NextDouble() - 0.5)).ToArray();
        double expected = 0;
        for (int p = 0; p < d; p++)
        {
            expected += (double)a[p] * b[p];
        }

        Assert.InRange(DotProduct.Dot(a, b), expected - 1e-6 * Math.Max(1, d), expected + 1e-6 * Math.Max(1, d));
    }

    [Fact]
    public void Dot_DifferentLengths_Throws() =>
        Assert.Throws<ArgumentException>(() => DotProduct.Dot(new float[3], new float[4]));

    [Fact]
    public void Dot_NaN_GivesNaN() =>
        Assert.True(float.IsNaN(DotProduct.Dot([1f, float.NaN, 2f], [1f, 1f, 1f])));

    [Theory]
    [MemberData(nameof(Lengths))]
    public void Divide_EveryTailLength_DividesEachValue(int d)
    {
        float[] values = Enumerable.Range(0, d).Select(p => (float)(p + 1)).ToArray();

        DotProduct.Divide(values, 4f);

        Assert.Equal(Enumerable.Range(0, d).Select(p => (p + 1) / 4f), values);
    }

    [Fact]
    public void Norm_ThreeFour_Five() => Assert.Equal(5f, DotProduct.Norm([3f, 0f, 4f]));
}
