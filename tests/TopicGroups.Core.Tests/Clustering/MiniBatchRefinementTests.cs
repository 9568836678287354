using TopicGroups.Core.Clustering;
using TopicGroups.Core.Tests.TestSupport;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.Clustering;

public sealed class MiniBatchRefinementTests
{
    [Fact]
    public void Fit_MiniBatchOnSeparatedGroups_RecoversThem()
    {
        // Tight groups (cosine about 0.99 to their centre) and 4 restarts, so seeding covers every group.
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 3, n: 3000, d: 24, trueGroups: 6, noise: 0.03, out int[] labels);

        ClusteringResult result = SphericalKMeans.Fit(rows, new SphericalKMeansOptions
        {
            GroupCount = 6,
            Seed = 2,
            RestartCount = 4,
            MaxIterations = 10,
            MiniBatchSize = 200,
        });

        Assert.Equal(1.0, PartitionAgreement.AdjustedRandIndex(labels, result.Assignments), 12);
        Assert.Equal(10, result.Iterations);
        Assert.False(result.Converged);
    }

    [Fact]
    public void Fit_MiniBatch_SameForOneAndThreeThreads()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 8, n: 5000, d: 32, trueGroups: 12, noise: 0.5, out _);
        ClusteringResult Run(int threads) => SphericalKMeans.Fit(rows, new SphericalKMeansOptions
        {
            GroupCount = 12,
            Seed = 6,
            RestartCount = 1,
            MaxIterations = 15,
            MiniBatchSize = 700,
            MaxDegreeOfParallelism = threads,
        });

        ClusteringResult one = Run(1);
        ClusteringResult three = Run(3);

        Assert.Equal(one.Assignments, three.Assignments);
        Assert.True(one.Centroids.SequenceEqual(three.Centroids));
        Assert.Equal(one.Objective, three.Objective);
    }

    [Fact]
    public void Fit_MiniBatch_ResultIsAConsistentState()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 9, n: 2000, d: 16, trueGroups: 8, noise: 0.6, out _);
        int k = 10;
        int d = 16;

        ClusteringResult result = SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = k, Seed = 1, MaxIterations = 5, MiniBatchSize = 128 });

        // No empty group; each centroid is the normalised mean of its members; similarities are cosines to it.
        int[] sizes = new int[k];
        double[] sums = new double[k * d];
        for (int i = 0; i < rows.Rows; i++)
        {
            sizes[result.Assignments[i]]++;
            for (int p = 0; p < d; p++)
            {
                sums[result.Assignments[i] * d + p] += rows.Row(i)[p];
            }
        }

        Assert.All(sizes, size => Assert.True(size > 0));
        for (int c = 0; c < k; c++)
        {
            double norm = Math.Sqrt(sums.AsSpan(c * d, d).ToArray().Sum(v => v * v));
            for (int p = 0; p < d; p++)
            {
                Assert.InRange(result.Centroids[c * d + p], sums[c * d + p] / norm - 1e-5, sums[c * d + p] / norm + 1e-5);
            }
        }
    }

    [Fact]
    public void Fit_MiniBatchLargerThanRows_RunsOnAllRows()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 2, n: 300, d: 8, trueGroups: 3, noise: 0.05, out int[] labels);

        ClusteringResult result = SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = 3, Seed = 5, MaxIterations = 4, MiniBatchSize = 10_000 });

        Assert.Equal(1.0, PartitionAgreement.AdjustedRandIndex(labels, result.Assignments), 12);
    }

    [Fact]
    public void Fit_NegativeMiniBatch_ThrowsNamingIt()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 2, n: 30, d: 8, trueGroups: 3, noise: 0.05, out _);

        var ex = Assert.Throws<ArgumentException>(() => SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = 3, MiniBatchSize = -1 }));

        Assert.Equal("MiniBatchSize", ex.ParamName);
    }
}
