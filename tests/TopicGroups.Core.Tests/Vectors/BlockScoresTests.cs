using TopicGroups.Core.Tests.TestSupport;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.Vectors;

// Tolerance policy for float inputs (integer-valued inputs must match exactly: every partial sum is an
// integer below 2^24, so every path computes it without rounding).
// A d-term dot product accumulated in float32 has forward error at most γ_d · Σ|x_p c_p|, with
// γ_d = d·u / (1 − d·u) and u = 2^-24 (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed.,
// §3.1). Each path is held to that bound against a float64 reference, and any two paths to twice it.
// (Today every path adds in ascending p with FMA, as Scalar does, so they agree bit for bit; the
// bound is what a reordering would still have to meet.)
public sealed class BlockScoresTests
{
    public static TheoryData<int> Dimensions => new() { 1, 3, 7, 8, 9, 15, 16, 17, 31, 32, 33, 64, 65, 384 };

    /// <summary>Centroid counts that hit every column tail: partial vectors, partial panels, several panels.</summary>
    public static TheoryData<int> CentroidCounts => new() { 1, 2, 7, 8, 9, 15, 16, 17, 31, 33, 47, 48, 49, 63, 64, 65, 100, 129 };

    /// <summary>Row counts that hit every row-tile remainder of the 6-row and 4-row tiles.</summary>
    public static TheoryData<int> RowCounts => new() { 1, 2, 3, 4, 5, 6, 7, 8, 11, 12, 13, 25 };

    [Theory, MemberData(nameof(Dimensions))]
    public void Compute_EveryAvailablePath_MatchesScalar(int d)
    {
        var (rows, centroids) = TestData.IntegerValued(seed: 17 + d, n: 5, k: 3, d);
        float[] expected = BlockScoresPaths.Run(BlockScoresPaths.Scalar, rows, centroids, d);
        Assert.Equal(ExactDots(rows, centroids, d), expected);
        foreach (BlockScoresPaths.Path path in BlockScoresPaths.Available())
        {
            Assert.True(expected.SequenceEqual(BlockScoresPaths.Run(path, rows, centroids, d)), $"{path} differs at d = {d}");
        }
    }

    [Theory, MemberData(nameof(CentroidCounts))]
    public void Compute_EveryColumnTail_MatchesScalar(int k)
    {
        var (rows, centroids) = TestData.IntegerValued(seed: 29 + k, n: 7, k, d: 19);
        float[] expected = BlockScoresPaths.Run(BlockScoresPaths.Scalar, rows, centroids, 19);
        foreach (BlockScoresPaths.Path path in BlockScoresPaths.Available())
        {
            Assert.True(expected.SequenceEqual(BlockScoresPaths.Run(path, rows, centroids, 19)), $"{path} differs at k = {k}");
        }
    }

    [Theory, MemberData(nameof(RowCounts))]
    public void Compute_EveryRowTail_MatchesScalar(int n)
    {
        var (rows, centroids) = TestData.IntegerValued(seed: 41 + n, n, k: 70, d: 24);
        float[] expected = BlockScoresPaths.Run(BlockScoresPaths.Scalar, rows, centroids, 24);
        foreach (BlockScoresPaths.Path path in BlockScoresPaths.Available())
        {
            Assert.True(expected.SequenceEqual(BlockScoresPaths.Run(path, rows, centroids, 24)), $"{path} differs at n = {n}");
        }
    }

    [Theory, MemberData(nameof(Dimensions))]
    public void Compute_RandomFloats_WithinDotProductErrorBound(int d)
    {
        const int n = 13;
        const int k = 37;
        var (rows, centroids) = TestData.UniformValued(seed: 100 + d, n, k, d);
        double gamma = d * Math.Pow(2, -24) / (1 - d * Math.Pow(2, -24));
        float[] scalar = BlockScoresPaths.Run(BlockScoresPaths.Scalar, rows, centroids, d);
        foreach (BlockScoresPaths.Path path in BlockScoresPaths.Available().Prepend(BlockScoresPaths.Scalar))
        {
            float[] scores = BlockScoresPaths.Run(path, rows, centroids, d);
            for (int i = 0; i < n; i++)
            {
                for (int j = 0; j < k; j++)
                {
                    double exact = 0;
                    double magnitude = 0;
                    for (int p = 0; p < d; p++)
                    {
                        exact += (double)rows[i * d + p] * centroids[j * d + p];
                        magnitude += Math.Abs((double)rows[i * d + p] * centroids[j * d + p]);
                    }

                    double bound = gamma * magnitude;
                    float score = scores[i * k + j];
                    Assert.True(Math.Abs(score - exact) <= bound, $"{path} d = {d} ({i}, {j}): {score} vs {exact}, bound {bound}");
                    Assert.True(Math.Abs(score - scalar[i * k + j]) <= 2 * bound, $"{path} vs Scalar d = {d} ({i}, {j})");
                }
            }
        }
    }

    [Fact]
    public void Compute_NoRows_WritesNothing()
    {
        var (_, centroids) = TestData.IntegerValued(seed: 1, n: 0, k: 4, d: 8);
        foreach (BlockScoresPaths.Path path in BlockScoresPaths.Available().Prepend(BlockScoresPaths.Scalar))
        {
            float[] scores = [42f];
            path.Compute([], centroids, 8, scores);
            Assert.Equal([42f], scores);
        }
    }

    [Fact]
    public void Compute_ScoresSpanTooShort_ThrowsNamingScores()
    {
        var (rows, centroids) = TestData.IntegerValued(seed: 2, n: 3, k: 4, d: 8);
        foreach (BlockScoresPaths.Path path in BlockScoresPaths.Available().Prepend(BlockScoresPaths.Scalar))
        {
            ArgumentException error = Assert.Throws<ArgumentException>(() => path.Compute(rows, centroids, 8, new float[3 * 4 - 1]));
            Assert.Equal("scores", error.ParamName);
        }
    }

    [Fact]
    public void Compute_StrideWiderThanK_LeavesGapColumnsUntouched()
    {
        const int d = 10;
        const int k = 20;
        const int stride = 37;
        var (rows, centroids) = TestData.IntegerValued(seed: 3, n: 9, k, d);
        float[] expected = BlockScoresPaths.Run(BlockScoresPaths.Scalar, rows, centroids, d);
        var panel = new CentroidPanel(k, d);
        panel.Pack(centroids);
        float[] scores = Enumerable.Repeat(-1f, 8 * stride + k).ToArray();

        BlockScores.Compute(rows, panel, scores, stride);

        for (int i = 0; i < 9; i++)
        {
            Assert.Equal(expected.AsSpan(i * k, k).ToArray(), scores.AsSpan(i * stride, k).ToArray());
            if (i < 8)
            {
                Assert.All(scores.AsSpan(i * stride + k, stride - k).ToArray(), gap => Assert.Equal(-1f, gap));
            }
        }
    }

    [Fact]
    public void Compute_NaNInRow_NaNOnlyInThatRowsScores()
    {
        // Documented behaviour: NaN propagates to the scores it touches and nowhere else.
        var (rows, centroids) = TestData.UniformValued(seed: 4, n: 8, k: 20, d: 16);
        rows[3 * 16 + 5] = float.NaN;
        foreach (BlockScoresPaths.Path path in BlockScoresPaths.Available().Prepend(BlockScoresPaths.Scalar))
        {
            float[] scores = BlockScoresPaths.Run(path, rows, centroids, 16);
            for (int i = 0; i < 8; i++)
            {
                for (int j = 0; j < 20; j++)
                {
                    Assert.Equal(i == 3, float.IsNaN(scores[i * 20 + j]));
                }
            }
        }
    }

    private static float[] ExactDots(float[] rows, float[] centroids, int d)
    {
        int n = rows.Length / d;
        int k = centroids.Length / d;
        float[] scores = new float[n * k];
        for (int i = 0; i < n; i++)
        {
            for (int j = 0; j < k; j++)
            {
                long sum = 0;
                for (int p = 0; p < d; p++)
                {
                    sum += (long)rows[i * d + p] * (long)centroids[j * d + p];
                }

                scores[i * k + j] = sum;
            }
        }

        return scores;
    }
}
