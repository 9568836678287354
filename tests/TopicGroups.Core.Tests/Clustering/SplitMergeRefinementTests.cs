using TopicGroups.Core.Clustering;
using TopicGroups.Core.Tests.TestSupport;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.Clustering;

public sealed class SplitMergeRefinementTests
{
    private static readonly SphericalKMeansOptions OneRun = new() { GroupCount = 16, RestartCount = 1, MaxIterations = 20, ConvergenceTolerance = 1e-4 };

    [Theory]
    [InlineData(1)]
    [InlineData(2)]
    public void Refine_UnevenGroups_ObjectiveNeverFallsAndGroupsAreRecovered(int seed)
    {
        EmbeddingMatrix rows = GroupCountSearchTests.UnevenGroups(seed, out int[] labels);
        ClusteringResult plain = SphericalKMeans.Fit(rows, OneRun with { Seed = (ulong)seed });

        ClusteringResult refined = SplitMergeRefinement.Refine(rows, plain, OneRun, maxMoves: 16, attempts: 3, out int moves);

        double plainNmi = PartitionAgreement.NormalisedMutualInformation(labels, plain.Assignments);
        double refinedNmi = PartitionAgreement.NormalisedMutualInformation(labels, refined.Assignments);
        Assert.True(refined.Objective >= plain.Objective, $"seed {seed}: {refined.Objective} < {plain.Objective}");
        Assert.True(refinedNmi > 0.95, $"seed {seed}: NMI {plainNmi:F3} -> {refinedNmi:F3} after {moves} moves");
        Assert.True(moves == 0 || refinedNmi > plainNmi, $"seed {seed}: {moves} moves, NMI {plainNmi:F3} -> {refinedNmi:F3}");
        Assert.Equal(16, refined.GroupCount);
        Assert.All(Enumerable.Range(0, 16), g => Assert.Contains(g, refined.Assignments));
    }

    [Fact]
    public void Refine_AtLeastOneMoveOnMergedSmallGroups()
    {
        // Seeds 1..4 of plain k-means++ on this data: at least one leaves small groups merged for the moves to fix.
        EmbeddingMatrix rows = GroupCountSearchTests.UnevenGroups(seed: 1, out _);
        int kept = 0;
        for (ulong seed = 1; seed <= 4; seed++)
        {
            ClusteringResult plain = SphericalKMeans.Fit(rows, OneRun with { Seed = seed });
            SplitMergeRefinement.Refine(rows, plain, OneRun, maxMoves: 16, attempts: 3, out int moves);
            kept += moves;
        }

        Assert.True(kept > 0);
    }

    [Fact]
    public void Refine_OneOrTwoThreads_SameResult()
    {
        EmbeddingMatrix rows = GroupCountSearchTests.UnevenGroups(seed: 2, out _);
        ClusteringResult plain = SphericalKMeans.Fit(rows, OneRun with { MaxDegreeOfParallelism = 1 });

        ClusteringResult one = SplitMergeRefinement.Refine(rows, plain, OneRun with { MaxDegreeOfParallelism = 1 }, 16, 3, out int movesOne);
        ClusteringResult two = SplitMergeRefinement.Refine(rows, plain, OneRun with { MaxDegreeOfParallelism = 2 }, 16, 3, out int movesTwo);

        Assert.Equal(movesOne, movesTwo);
        Assert.Equal(one.Assignments, two.Assignments);
        Assert.Equal(one.Objective, two.Objective);
    }

    [Fact]
    public void Refine_NoMovesAllowed_ReturnsTheFitUnchanged()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 3, n: 600, d: 16, trueGroups: 4, noise: 0.2, out _);
        ClusteringResult plain = SphericalKMeans.Fit(rows, OneRun with { GroupCount = 4 });

        Assert.Same(plain, SplitMergeRefinement.Refine(rows, plain, OneRun with { GroupCount = 4 }, maxMoves: 0, attempts: 3, out int moves));
        Assert.Equal(0, moves);
    }

    [Fact]
    public void Resize_FewerOrMoreGroups_GivesThatManyUnitCentres()
    {
        EmbeddingMatrix rows = GroupCountSearchTests.UnevenGroups(seed: 1, out _);
        ClusteringResult fit = SphericalKMeans.Fit(rows, OneRun);

        foreach (int k in new[] { 12, 20 })
        {
            float[] centres = SplitMergeRefinement.Resize(rows, fit, k, maxDegreeOfParallelism: 1, CancellationToken.None)!;
            Assert.Equal(k * rows.Dimensions, centres.Length);
            for (int j = 0; j < k; j++)
            {
                Assert.Equal(1.0, System.Numerics.Tensors.TensorPrimitives.Norm(centres.AsSpan(j * rows.Dimensions, rows.Dimensions)), 1e-4);
            }
        }
    }
}
