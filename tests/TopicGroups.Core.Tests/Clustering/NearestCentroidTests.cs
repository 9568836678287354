using TopicGroups.Core.Clustering;
using TopicGroups.Core.Tests.TestSupport;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.Clustering;

public sealed class NearestCentroidTests
{
    // Tolerance: float32 dot products of unit vectors over d = 40 terms against a float64 reference, 1e-5 per score.
    [Fact]
    public void Assign_RandomRowsAndCentroids_MatchesBruteForceArgmax()
    {
        // 1,000 rows = 4 blocks, 37 centroids: a partial panel and a partial last block.
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 41, n: 1000, d: 40, trueGroups: 6, noise: 0.8, out _);
        EmbeddingMatrix centroids = TestData.UnitClusters(seed: 42, n: 37, d: 40, trueGroups: 37, noise: 1.0, out _);
        int[] assignments = new int[rows.Rows];
        float[] similarities = new float[rows.Rows];

        double mean = NearestCentroid.Assign(rows, centroids.Values, assignments, similarities);

        double expectedSum = 0;
        for (int i = 0; i < rows.Rows; i++)
        {
            int best = 0;
            double bestScore = double.NegativeInfinity;
            for (int j = 0; j < centroids.Rows; j++)
            {
                double score = 0;
                for (int p = 0; p < rows.Dimensions; p++)
                {
                    score += (double)rows.Row(i)[p] * centroids.Row(j)[p];
                }

                if (score > bestScore)
                {
                    best = j;
                    bestScore = score;
                }
            }

            // float32 products can swap two centroids closer than rounding; then the scores still agree.
            Assert.True(assignments[i] == best || Math.Abs(similarities[i] - bestScore) < 1e-5, $"row {i}: {assignments[i]} vs {best}");
            Assert.InRange(similarities[i], bestScore - 1e-5, bestScore + 1e-5);
            expectedSum += bestScore;
        }

        Assert.InRange(mean, expectedSum / rows.Rows - 1e-6, expectedSum / rows.Rows + 1e-6);
    }

    [Fact]
    public void Assign_EqualCentroids_TieGoesToLowerIndex()
    {
        var rows = new EmbeddingMatrix([0.6f, 0.8f, 1f, 0f], 2, 2);
        float[] centroids = [0f, 1f, 0.6f, 0.8f, 0.6f, 0.8f];
        int[] assignments = new int[2];

        NearestCentroid.Assign(rows, centroids, assignments);

        Assert.Equal(new[] { 1, 1 }, assignments);
    }

    [Fact]
    public void Assign_OneOrSeveralThreads_IdenticalMean()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 7, n: 2000, d: 33, trueGroups: 5, noise: 0.5, out _);
        EmbeddingMatrix centroids = TestData.UnitClusters(seed: 8, n: 5, d: 33, trueGroups: 5, noise: 0.1, out _);

        double one = NearestCentroid.Assign(rows, centroids.Values, maxDegreeOfParallelism: 1);
        double three = NearestCentroid.Assign(rows, centroids.Values, maxDegreeOfParallelism: 3);

        Assert.Equal(one, three);
    }

    [Fact]
    public void Assign_CentroidsNotMultipleOfDimensions_ThrowsNamingThem()
    {
        var rows = new EmbeddingMatrix([1f, 0f, 0f], 1, 3);

        var ex = Assert.Throws<ArgumentException>(() => NearestCentroid.Assign(rows, [1f, 0f]));

        Assert.Equal("unitCentroids", ex.ParamName);
    }
}
