using TopicGroups.Core.Clustering;
using TopicGroups.Core.Tests.TestSupport;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.Clustering;

public sealed class SphericalKMeansTests
{
    /// <summary>
    /// Allowed drop of the objective between iterations. In exact arithmetic it never drops (Dhillon &amp; Modha,
    /// 2001, §3); the assignment compares float32 cosines, so a row may pick a centroid that is better by
    /// less than float32 rounding (~1e-7), which can lower the mean by at most about that much.
    /// </summary>
    private const double ObjectiveRoundingSlack = 1e-6;

    [Fact]
    public void Fit_WellSeparatedGroups_RecoversThemExactly()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 3, n: 600, d: 24, trueGroups: 5, noise: 0.05, out int[] labels);

        ClusteringResult result = SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = 5, Seed = 11 });

        Assert.Equal(1.0, PartitionAgreement.AdjustedRandIndex(labels, result.Assignments), 12);
        Assert.True(result.Converged);
        Assert.InRange(result.Objective, 0.9, 1.0);
    }

    [Theory]
    [InlineData(1UL)]
    [InlineData(2UL)]
    [InlineData(3UL)]
    public void Fit_EachIteration_ObjectiveNeverDecreases(ulong seed)
    {
        // Overlapping groups so that runs take many iterations.
        EmbeddingMatrix rows = TestData.UnitClusters(seed: (int)seed, n: 1500, d: 16, trueGroups: 12, noise: 0.6, out _);
        var options = new SphericalKMeansOptions { GroupCount = 12, Seed = seed, RestartCount = 1, MaxIterations = 60, ConvergenceTolerance = 0 };
        var seedingObjective = double.NaN;

        ClusteringResult result = SphericalKMeans.Fit(rows, options, p =>
        {
            if (p.Stage == ClusteringStage.Seeding)
            {
                seedingObjective = p.Objective;
            }
        });

        Assert.True(result.Iterations >= 5, $"seed {seed}: only {result.Iterations} iterations; the test needs a longer run");
        double previous = seedingObjective;
        foreach (IterationStats stats in result.IterationHistory)
        {
            Assert.True(stats.Objective >= previous - ObjectiveRoundingSlack,
                $"seed {seed}: objective fell from {previous} to {stats.Objective} at iteration {stats.Iteration}");
            previous = stats.Objective;
        }
    }

    [Fact]
    public void Fit_SameSeedOneOrSeveralThreads_IdenticalAssignmentsAndCentroids()
    {
        // 3,000 rows = 12 blocks, so several threads really share the work.
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 21, n: 3000, d: 40, trueGroups: 9, noise: 0.5, out _);
        ClusteringResult Run(int threads) => SphericalKMeans.Fit(rows, new SphericalKMeansOptions
        {
            GroupCount = 9,
            Seed = 77,
            RestartCount = 2,
            MaxDegreeOfParallelism = threads,
        });

        ClusteringResult single = Run(1);
        foreach (int threads in new[] { 2, 3, 8 })
        {
            ClusteringResult several = Run(threads);
            Assert.Equal(single.Assignments, several.Assignments);
            Assert.True(single.Centroids.SequenceEqual(several.Centroids), $"centroids differ with {threads} threads (seed 77)");
            Assert.True(single.Similarities.SequenceEqual(several.Similarities), $"similarities differ with {threads} threads (seed 77)");
            Assert.Equal(single.Objective, several.Objective);
            Assert.Equal(single.RestartObjectives, several.RestartObjectives);
        }
    }

    [Fact]
    public void Fit_LargeInputSeededFromSample_RecoversGroupsSameForAnyThreadCount()
    {
        // 10,000 rows > the 8,192-row seeding sample, so k-means++ runs on a per-restart sample.
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 13, n: 10_000, d: 8, trueGroups: 4, noise: 0.05, out int[] labels);
        var reports = new List<ClusteringProgress>();
        ClusteringResult Run(int threads) => SphericalKMeans.Fit(
            rows, new SphericalKMeansOptions { GroupCount = 4, Seed = 5, RestartCount = 2, MaxDegreeOfParallelism = threads }, reports.Add);

        ClusteringResult single = Run(1);
        ClusteringResult two = Run(2);

        Assert.Equal(1.0, PartitionAgreement.AdjustedRandIndex(labels, single.Assignments), 12);
        Assert.Equal(single.Assignments, two.Assignments);
        Assert.True(single.Centroids.SequenceEqual(two.Centroids));
        Assert.True(single.Converged);
        Assert.All(reports.Where(p => p.Stage == ClusteringStage.Seeding), p => Assert.InRange(p.Objective, 0.5, single.Objective + 1e-6));
    }

    [Theory]
    [InlineData(0UL)]
    [InlineData(5UL)]
    [InlineData(9UL)]
    public void Fit_EightRestarts_NeverWorseThanOne(ulong seed)
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 30 + (int)seed, n: 800, d: 12, trueGroups: 10, noise: 0.7, out _);

        ClusteringResult one = SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = 10, Seed = seed, RestartCount = 1 });
        ClusteringResult eight = SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = 10, Seed = seed, RestartCount = 8 });

        // Restart r draws from stream r of the seed, so restart 0 of both fits is the same run.
        Assert.Equal(one.Objective, eight.RestartObjectives[0]);
        Assert.True(eight.Objective >= one.Objective, $"seed {seed}: 8 restarts {eight.Objective} < 1 restart {one.Objective}");
        Assert.Equal(eight.RestartObjectives.Max(), eight.Objective);
        Assert.Equal(eight.Objective, eight.RestartObjectives[eight.KeptRestart]);
    }

    [Fact]
    public void Fit_DuplicatesOnly_NoEmptyGroupReturned()
    {
        EmbeddingMatrix rows = TestData.Duplicates(n: 40, d: 8);

        ClusteringResult result = SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = 6, Seed = 1 });

        AssertNoEmptyGroup(result);
        Assert.Equal(1.0, result.Objective, 6);
    }

    [Fact]
    public void Fit_FewerDistinctRowsThanGroups_NoEmptyGroupReturned()
    {
        // Three distinct directions, each repeated, asked for five groups.
        EmbeddingMatrix distinct = TestData.UnitClusters(seed: 8, n: 3, d: 6, trueGroups: 3, noise: 0, out _);
        var rows = EmbeddingMatrix.Allocate(30, 6);
        for (int i = 0; i < 30; i++)
        {
            distinct.Row(i % 3).CopyTo(rows.Row(i));
        }

        ClusteringResult result = SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = 5, Seed = 4, RestartCount = 3 });

        AssertNoEmptyGroup(result);
        Assert.Equal(1.0, result.Objective, 6);
    }

    [Fact]
    public void Fit_RowsEqualGroups_EveryRowItsOwnGroup()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 4, n: 9, d: 5, trueGroups: 9, noise: 0.3, out _);

        ClusteringResult result = SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = 9, Seed = 2 });

        Assert.Equal(Enumerable.Range(0, 9), result.Assignments.Order());
        Assert.All(result.Similarities, s => Assert.Equal(1f, s, 5));
    }

    [Fact]
    public void Fit_RowsEqualGroupsWithDuplicates_NoEmptyGroupReturned()
    {
        EmbeddingMatrix rows = TestData.Duplicates(n: 7, d: 3);

        ClusteringResult result = SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = 7, Seed = 2 });

        AssertNoEmptyGroup(result);
    }

    [Fact]
    public void Fit_OneGroup_EveryRowInItAndRunnerUpIsItself()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 5, n: 50, d: 7, trueGroups: 3, noise: 0.4, out _);

        ClusteringResult result = SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = 1 });

        Assert.All(result.Assignments, group => Assert.Equal(0, group));
        Assert.Equal(result.Assignments, result.RunnerUpGroups);
        Assert.Equal(result.Similarities, result.RunnerUpSimilarities);
    }

    [Fact]
    public void Fit_Result_FieldsAgreeWithCentroids()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 6, n: 700, d: 20, trueGroups: 7, noise: 0.5, out _);
        int k = 7;
        int d = 20;

        ClusteringResult result = SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = k, Seed = 3, RestartCount = 3, MaxIterations = 4 });

        Assert.Equal(k * d, result.Centroids.Length);
        for (int c = 0; c < k; c++)
        {
            AssertClose(1.0, Math.Sqrt(result.Centroids.AsSpan(c * d, d).ToArray().Sum(v => (double)v * v)), $"centroid {c} length");
        }

        double similaritySum = 0;
        for (int i = 0; i < rows.Rows; i++)
        {
            float[] cosines = Enumerable.Range(0, k).Select(c => Dot(rows.Row(i), result.Centroids.AsSpan(c * d, d))).ToArray();
            int own = result.Assignments[i];
            int runnerUp = result.RunnerUpGroups[i];
            Assert.NotEqual(own, runnerUp);
            AssertClose(cosines[own], result.Similarities[i], $"row {i} similarity");
            AssertClose(cosines[runnerUp], result.RunnerUpSimilarities[i], $"row {i} runner-up similarity");
            AssertClose(cosines.Where((_, c) => c != own).Max(), result.RunnerUpSimilarities[i], $"row {i} best other");
            similaritySum += result.Similarities[i];
        }

        AssertClose(similaritySum / rows.Rows, result.Objective, "objective");
        Assert.Equal(result.Iterations, result.IterationHistory.Count);
        Assert.Equal(Enumerable.Range(1, result.Iterations), result.IterationHistory.Select(s => s.Iteration));
        Assert.Equal(rows.Rows, result.IterationHistory[0].ReassignedCount);
        Assert.Equal(result.Objective, result.IterationHistory[^1].Objective);
        Assert.Equal(3, result.RestartObjectives.Count);
        Assert.InRange(result.KeptRestart, 0, 2);
        Assert.True(result.SeedingTime <= result.TotalTime);
        Assert.True(result.SeedingTime > TimeSpan.Zero);
    }

    [Fact]
    public void Fit_RunAllIterations_PerformsExactlyMaxIterations()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 7, n: 200, d: 8, trueGroups: 4, noise: 0.05, out _);

        ClusteringResult result = SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = 4, MaxIterations = 13, RunAllIterations = true, RestartCount = 2 });

        Assert.Equal(13, result.Iterations);
        Assert.False(result.Converged);
    }

    [Fact]
    public void Fit_Progress_ReportsSeedingThenEachIterationPerRestart()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 9, n: 300, d: 10, trueGroups: 4, noise: 0.3, out _);
        var reports = new List<ClusteringProgress>();

        ClusteringResult result = SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = 4, RestartCount = 2, MaxIterations = 5, RunAllIterations = true }, reports.Add);

        ClusteringProgress[] expected = Enumerable.Range(0, 2).SelectMany(r =>
            Enumerable.Range(0, 6).Select(i => new ClusteringProgress(i == 0 ? ClusteringStage.Seeding : ClusteringStage.Refining, r, i, 0))).ToArray();
        Assert.Equal(expected.Select(p => (p.Stage, p.Restart, p.Iteration)), reports.Select(p => (p.Stage, p.Restart, p.Iteration)));
        Assert.Equal(result.IterationHistory.Select(s => s.Objective), reports.Where(p => p.Restart == result.KeptRestart && p.Iteration > 0).Select(p => p.Objective));
    }

    [Fact]
    public void Fit_CancelledDuringRefinement_ThrowsOperationCanceled()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 10, n: 300, d: 10, trueGroups: 4, noise: 0.3, out _);
        using var cancellation = new CancellationTokenSource();
        int iterationsSeen = 0;

        Assert.ThrowsAny<OperationCanceledException>(() => SphericalKMeans.Fit(
            rows,
            new SphericalKMeansOptions { GroupCount = 4, MaxIterations = 50, RunAllIterations = true },
            p =>
            {
                if (p.Stage == ClusteringStage.Refining && ++iterationsSeen == 2)
                {
                    cancellation.Cancel();
                }
            },
            cancellation.Token));
        Assert.Equal(2, iterationsSeen);
    }

    [Fact]
    public void Fit_CancelledBeforeStart_ThrowsBeforeSeeding()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 10, n: 100, d: 10, trueGroups: 4, noise: 0.3, out _);
        int reports = 0;

        Assert.ThrowsAny<OperationCanceledException>(() =>
            SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = 4 }, _ => reports++, new CancellationToken(canceled: true)));
        Assert.Equal(0, reports);
    }

    [Fact]
    public void Fit_SameSeedTwice_IdenticalResult()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 12, n: 500, d: 9, trueGroups: 6, noise: 0.6, out _);
        var options = new SphericalKMeansOptions { GroupCount = 6, Seed = 1234 };

        ClusteringResult first = SphericalKMeans.Fit(rows, options);
        ClusteringResult second = SphericalKMeans.Fit(rows, options);

        Assert.Equal(first.Assignments, second.Assignments);
        Assert.Equal(first.RestartObjectives, second.RestartObjectives);
    }

    public static TheoryData<string, SphericalKMeansOptions> BadOptions => new()
    {
        { "GroupCount", new SphericalKMeansOptions { GroupCount = 0 } },
        { "GroupCount", new SphericalKMeansOptions { GroupCount = 11 } },
        { "RestartCount", new SphericalKMeansOptions { GroupCount = 2, RestartCount = 0 } },
        { "MaxIterations", new SphericalKMeansOptions { GroupCount = 2, MaxIterations = 0 } },
        { "ConvergenceTolerance", new SphericalKMeansOptions { GroupCount = 2, ConvergenceTolerance = -1e-3 } },
        { "ConvergenceTolerance", new SphericalKMeansOptions { GroupCount = 2, ConvergenceTolerance = double.NaN } },
        { "MaxDegreeOfParallelism", new SphericalKMeansOptions { GroupCount = 2, MaxDegreeOfParallelism = 0 } },
        { "MaxDegreeOfParallelism", new SphericalKMeansOptions { GroupCount = 2, MaxDegreeOfParallelism = -2 } },
    };

    [Theory, MemberData(nameof(BadOptions))]
    public void Fit_OptionOutOfRange_ArgumentExceptionNamingTheOption(string option, SphericalKMeansOptions options)
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 1, n: 10, d: 4, trueGroups: 2, noise: 0.1, out _);

        ArgumentException error = Assert.Throws<ArgumentException>(() => SphericalKMeans.Fit(rows, options));

        Assert.Equal(option, error.ParamName);
        Assert.StartsWith(option + " is ", error.Message);
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

    /// <summary>Float32 cosines against a float64 reference: 1e-5 is ~100 float32 ulps at 1, far above rounding, far below any real error.</summary>
    private static void AssertClose(double expected, double actual, string what) =>
        Assert.True(Math.Abs(expected - actual) <= 1e-5, $"{what}: expected {expected}, got {actual}");

    private static float Dot(ReadOnlySpan<float> a, ReadOnlySpan<float> b)
    {
        double sum = 0;
        for (int p = 0; p < a.Length; p++)
        {
            sum += (double)a[p] * b[p];
        }

        return (float)sum;
    }
}
