using TopicGroups.Core.Clustering;
using TopicGroups.Core.Tests.TestSupport;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.Clustering;

// Pruned assignment passes must decide exactly as full passes (the bounds keep a rounding margin), so every
// comparison here is exact; tolerances appear only where a bound is compared with a recomputed cosine.
public sealed class GroupAssignmentTests
{
    /// <summary>Overlapping groups in 32 dimensions: many rows sit near two centroids, so every pruning test gets exercised.</summary>
    private static EmbeddingMatrix Overlapping(int n = 4000, int trueGroups = 30) =>
        TestData.UnitClusters(seed: 57, n: n, d: 32, trueGroups: trueGroups, noise: 0.35, out _);

    private static ClusteringWorkspace SeededWorkspace(EmbeddingMatrix rows, int k, int workers, bool pruning, ulong seed = 9)
    {
        var ws = new ClusteringWorkspace(rows, k, workers, sampleForSeeding: false, seedCandidates: 1, pruning);
        if (ws.Bounds is not null)
        {
            ws.Bounds.AlwaysPrune = true;   // every test here exercises the pruned passes from the second on
        }
        SplitMix64 random = SplitMix64.ForStream(seed, 0);
        KMeansPlusPlusSeeding.Seed(ws.Seeding, ws.Centroids, k, 1, ref random, CancellationToken.None);
        Array.Fill(ws.Assignments, -1);
        CentroidUpdate.Reset(ws);
        return ws;
    }

    private static int Iterate(ClusteringWorkspace ws)
    {
        (_, int scored) = GroupAssignment.AssignAll(ws);
        CentroidUpdate.CountSizes(ws);
        EmptyGroupRepair.Repair(ws);
        CentroidUpdate.Update(ws);
        return scored;
    }

    [Theory]
    [InlineData(1)]
    [InlineData(3)]
    public void AssignAll_PrunedAndFullPasses_SameAssignmentsEveryIteration(int workers)
    {
        EmbeddingMatrix rows = Overlapping();
        ClusteringWorkspace full = SeededWorkspace(rows, 40, workers, pruning: false);
        ClusteringWorkspace pruned = SeededWorkspace(rows, 40, workers, pruning: true);

        for (int iteration = 1; iteration <= 25; iteration++)
        {
            Iterate(full);
            Iterate(pruned);
            Assert.True(full.Assignments.SequenceEqual(pruned.Assignments), $"assignments differ at iteration {iteration} ({workers} workers)");
            Assert.True(full.Centroids.SequenceEqual(pruned.Centroids), $"centroids differ at iteration {iteration} ({workers} workers)");
        }
    }

    [Theory]
    [InlineData(16)]
    [InlineData(32)]
    [InlineData(100)]
    public void AssignAll_GatedPruningAtEachGroupCount_SameAsFullAndUsesEveryTest(int k)
    {
        // The default gate (prune once the median centroid barely moves), not forced: the path fits take.
        EmbeddingMatrix rows = Overlapping(n: 6000, trueGroups: k);
        ClusteringWorkspace full = SeededWorkspace(rows, k, workers: 2, pruning: false);
        ClusteringWorkspace pruned = SeededWorkspace(rows, k, workers: 2, pruning: true);
        pruned.Bounds!.AlwaysPrune = false;

        int prunedPasses = 0, byBounds = 0, byJumpers = 0, byNearWithoutJumpers = 0;
        for (int iteration = 1; iteration <= 30; iteration++)
        {
            Iterate(full);
            int scored = Iterate(pruned);
            Assert.True(full.Assignments.SequenceEqual(pruned.Assignments), $"k = {k}: assignments differ at iteration {iteration}");
            Assert.True(full.Centroids.SequenceEqual(pruned.Centroids), $"k = {k}: centroids differ at iteration {iteration}");
            if (scored < rows.Rows)
            {
                AssignmentBounds b = pruned.Bounds!;
                prunedPasses++;
                byBounds += b.Skipped.Sum();
                byJumpers += b.SettledByJumpers.Sum();
                byNearWithoutJumpers += b.JumperCount == 0 ? b.SettledByNear.Sum() : 0;
            }
        }

        Assert.True(prunedPasses > 0, $"k = {k}: no pass was pruned");
        Assert.True(byBounds > 0, $"k = {k}: no row settled by bounds alone");
        Assert.True(byNearWithoutJumpers > 0 || byJumpers > 0, $"k = {k}: no row settled by the near or jumper tests");
    }

    [Theory]
    [InlineData(1)]
    [InlineData(5)]
    [InlineData(16)]
    [InlineData(17)]
    [InlineData(32)]
    [InlineData(100)]
    [InlineData(203)]
    public void TopByLanes_SameListAsOneByOneInsertion_TiesIncluded(int k)
    {
        // Scores on a coarse grid (many exact ties) and in ascending runs (every score enters the list).
        var random = new Random(k);
        const int tracked = AssignmentBounds.NearCount + 1;
        for (int trial = 0; trial < 300; trial++)
        {
            float[] scores = new float[k];
            for (int j = 0; j < k; j++)
            {
                scores[j] = trial % 3 == 0 ? j * 0.01f : MathF.Round((float)random.NextDouble() * 8) / 8;
            }

            int[] expected = Enumerable.Repeat(-1, tracked).ToArray();
            float[] expectedScores = Enumerable.Repeat(float.NegativeInfinity, tracked).ToArray();
            for (int j = 0; j < k; j++)
            {
                GroupAssignment.KeepIfTop(expected, expectedScores, j, scores[j]);
            }

            int[] actual = new int[tracked];
            float[] actualScores = new float[tracked];
            GroupAssignment.TopByLanes(scores, actual, actualScores);
            Assert.Equal(expected, actual);
            Assert.Equal(expectedScores, actualScores);
        }
    }

    [Fact]
    public void AssignAll_LateIterations_ScoreFewerRowsInFull()
    {
        EmbeddingMatrix rows = Overlapping();
        ClusteringWorkspace ws = SeededWorkspace(rows, 40, workers: 2, pruning: true);

        var scored = new List<int>();
        for (int iteration = 1; iteration <= 20; iteration++)
        {
            scored.Add(Iterate(ws));
        }

        Assert.Equal(rows.Rows, scored[0]);
        Assert.True(scored.Skip(10).All(s => s < rows.Rows / 2), $"rows scored in full per iteration: {string.Join(", ", scored)}");
    }

    [Fact]
    public void AssignAll_AfterPrunedPass_BoundsHoldForEveryRow()
    {
        EmbeddingMatrix rows = Overlapping();
        ClusteringWorkspace ws = SeededWorkspace(rows, 40, workers: 2, pruning: true);
        int k = 40;
        int d = rows.Dimensions;
        AssignmentBounds bounds = ws.Bounds!;

        for (int iteration = 1; iteration <= 12; iteration++)
        {
            Iterate(ws);
        }

        // The bounds refer to PreviousCentroids, the ones the last pass assigned against.
        for (int i = 0; i < rows.Rows; i++)
        {
            int own = ws.Assignments[i];
            double ownCosine = Cosine(rows.Row(i), bounds.PreviousCentroids.AsSpan(own * d, d));
            Assert.True(bounds.OwnLower[i] <= ownCosine + 1e-5, $"row {i}: lower bound {bounds.OwnLower[i]} > cosine {ownCosine}");
            ReadOnlySpan<int> near = bounds.Near.AsSpan(i * AssignmentBounds.NearCount, AssignmentBounds.NearCount);
            Assert.True(near.Contains(own), $"row {i}: own centroid {own} not among its near centroids");
            for (int c = 0; c < k; c++)
            {
                if (c == own)
                {
                    continue;
                }

                double cosine = Cosine(rows.Row(i), bounds.PreviousCentroids.AsSpan(c * d, d));
                Assert.True(bounds.OtherUpper[i] >= cosine - 1e-5, $"row {i}: upper bound {bounds.OtherUpper[i]} < cosine {cosine} to centroid {c}");
                int nearSlot = near.IndexOf(c);
                if (nearSlot < 0)
                {
                    Assert.True(bounds.FarUpper[i] >= cosine - 1e-5, $"row {i}: far bound {bounds.FarUpper[i]} < cosine {cosine} to centroid {c}");
                }
                else
                {
                    float nearBound = bounds.NearUpper[i * AssignmentBounds.NearCount + nearSlot];
                    Assert.True(nearBound >= cosine - 1e-5, $"row {i}: near bound {nearBound} < cosine {cosine} to near centroid {c}");
                    Assert.True(nearBound <= bounds.OtherUpper[i] + 1e-6, $"row {i}: near bound {nearBound} above the bound on all others {bounds.OtherUpper[i]}");
                }
            }
        }
    }

    [Fact]
    public void Fit_PruningForcedOrOff_IdenticalResults()
    {
        EmbeddingMatrix rows = Overlapping();
        SphericalKMeansOptions Options(bool prune) => new()
        {
            GroupCount = 40,
            Seed = 4,
            RestartCount = 2,
            MaxIterations = 30,
            ForcePruning = prune,
            DisablePruning = !prune,
        };

        ClusteringResult pruned = SphericalKMeans.Fit(rows, Options(prune: true));
        ClusteringResult full = SphericalKMeans.Fit(rows, Options(prune: false));

        Assert.Equal(full.Assignments, pruned.Assignments);
        Assert.True(full.Centroids.SequenceEqual(pruned.Centroids));
        Assert.True(full.Similarities.SequenceEqual(pruned.Similarities));
        Assert.True(full.RunnerUpSimilarities.SequenceEqual(pruned.RunnerUpSimilarities));
        Assert.Equal(full.RunnerUpGroups, pruned.RunnerUpGroups);
        Assert.Equal(full.Objective, pruned.Objective);
        Assert.Equal(full.Iterations, pruned.Iterations);
    }

    [Fact]
    public void Fit_ManyGroupsPrunedByDefault_SameAsFullForOneAndThreeThreads()
    {
        // k = 70 ≥ PruningMinimumGroups: the default fit prunes.
        EmbeddingMatrix rows = Overlapping(n: 6000, trueGroups: 50);
        ClusteringResult Run(int threads, bool disable) => SphericalKMeans.Fit(rows, new SphericalKMeansOptions
        {
            GroupCount = 70,
            Seed = 12,
            RestartCount = 1,
            MaxIterations = 25,
            MaxDegreeOfParallelism = threads,
            DisablePruning = disable,
        });

        ClusteringResult full = Run(1, disable: true);
        foreach (int threads in new[] { 1, 3 })
        {
            ClusteringResult pruned = Run(threads, disable: false);
            Assert.Equal(full.Assignments, pruned.Assignments);
            Assert.True(full.Centroids.SequenceEqual(pruned.Centroids), $"centroids differ with {threads} threads");
            Assert.Equal(full.Objective, pruned.Objective);
        }
    }

    [Fact]
    public void Update_IncrementalAfterFewChanges_MatchesRebuildFromAllRows()
    {
        EmbeddingMatrix rows = Overlapping();
        ClusteringWorkspace ws = SeededWorkspace(rows, 40, workers: 2, pruning: false);
        for (int iteration = 1; iteration <= 15; iteration++)
        {
            Iterate(ws);   // late iterations move few rows: incremental updates
        }

        float[] incremental = ws.Centroids.ToArray();
        CentroidUpdate.Reset(ws);
        CentroidUpdate.Update(ws);   // rebuilt from every row

        for (int v = 0; v < incremental.Length; v++)
        {
            Assert.True(Math.Abs(incremental[v] - ws.Centroids[v]) <= 1e-6f, $"value {v}: {incremental[v]} vs {ws.Centroids[v]}");
        }
    }

    private static double Cosine(ReadOnlySpan<float> a, ReadOnlySpan<float> b)
    {
        double dot = 0, aa = 0, bb = 0;
        for (int p = 0; p < a.Length; p++)
        {
            dot += (double)a[p] * b[p];
            aa += (double)a[p] * a[p];
            bb += (double)b[p] * b[p];
        }

        return dot / Math.Sqrt(aa * bb);
    }
}
