using TopicGroups.Core.Clustering;
using TopicGroups.Core.Tests.TestSupport;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.Clustering;

public sealed class SphericalKMeansTests
{
    [Fact]
    public void Fit_WellSeparatedGroups_RecoversThemExactly()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 3, n: 600, d: 24, trueGroups: 5, noise: 0.05, out int[] labels);

        ClusteringResult result = SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = 5, Seed = 11 });

        for (int g = 0; g < 5; g++)
        {
            int[] groupsOfLabel = Enumerable.Range(0, rows.Rows).Where(i => labels[i] == g).Select(i => result.Assignments[i]).Distinct().ToArray();
            Assert.Single(groupsOfLabel);
        }

        Assert.Equal(5, result.Assignments.Distinct().Count());
        Assert.True(result.Converged);
        Assert.InRange(result.Objective, 0.9, 1.0);
    }

    [Fact]
    public void Fit_DuplicatesOnly_NoEmptyGroupReturned()
    {
        EmbeddingMatrix rows = TestData.Duplicates(n: 40, d: 8);

        ClusteringResult result = SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = 6, Seed = 1 });

        AssertNoEmptyGroup(result);
    }

    [Fact]
    public void Fit_RowsEqualGroups_EveryRowItsOwnGroup()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 4, n: 9, d: 5, trueGroups: 9, noise: 0.3, out _);

        ClusteringResult result = SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = 9, Seed = 2 });

        Assert.Equal(Enumerable.Range(0, 9), result.Assignments.Order());
        Assert.All(result.Similarities, s => Assert.Equal(1f, s, 5));
    }

    internal static void AssertNoEmptyGroup(ClusteringResult result)
    {
        int[] sizes = new int[result.GroupCount];
        foreach (int group in result.Assignments)
        {
            sizes[group]++;
        }

        Assert.All(sizes, size => Assert.True(size > 0, $"sizes: [{string.Join(", ", sizes)}]"));
    }
}
