using System.Diagnostics;
using System.Reflection;
using TopicGroups.Core.Clustering;
using TopicGroups.Core.Grouping;
using TopicGroups.Core.Terms;
using TopicGroups.Core.Tests.TestSupport;
using TopicGroups.Core.Vectors;
using Xunit.Abstractions;

namespace TopicGroups.Core.Tests.Grouping;

// Tolerance policy: routing scores with the blocked FMA kernel; the reference here sums in float64, so the
// two agree to about 1e-6 per score at these dimensions. Assignments are compared only where the best and
// second-best reference scores differ by more than 1e-5 (a near-tie may go either way).
public sealed class GroupRoutingTests(ITestOutputHelper output)
{
    private static GroupingSnapshot Snapshot(float[] unitCentroids, int d, int[]? ids = null, int size = 100, double median = 0.9, double mad = 0.02)
    {
        int k = unitCentroids.Length / d;
        ids ??= Enumerable.Range(1, k).ToArray();
        return new GroupingSnapshot
        {
            Centroids = unitCentroids,
            Dimensions = d,
            Groups = ids.Select(id => new SnapshotGroup(id, size, median, 0, Array.Empty<WeightedTerm>(), Array.Empty<GroupExample>(), median, mad)).ToArray(),
            DocumentCount = size * k,
            Objective = median,
            OutlierScoreThreshold = GroupingDefaults.OutlierScoreThreshold,
            OutlierMinimumGroupSize = GroupingDefaults.OutlierMinimumGroupSize,
            HighestGroupId = ids.Max(),
        };
    }

    private static float[] UnitCentroids(int seed, int k, int d)
    {
        var (_, centroids) = TestData.UniformValued(seed, 0, k, d);
        RowNormalisation.NormaliseInPlace(new EmbeddingMatrix(centroids, k, d));
        return centroids;
    }

    [Theory]
    [InlineData(1, 7, 3)]
    [InlineData(300, 33, 5)]
    [InlineData(1000, 384, 100)]
    [InlineData(257, 16, 1)]
    public void Route_RandomRows_AgreesWithNearestCentreByDefinition(int n, int d, int k)
    {
        float[] centroids = UnitCentroids(seed: 40 + k, k, d);
        var (rows, _) = TestData.UniformValued(seed: 50 + n, n, 0, d);
        int[] ids = Enumerable.Range(0, k).Select(g => 10 + 3 * g).ToArray();   // ids need not be 1..k
        var matrix = new EmbeddingMatrix((float[])rows.Clone(), n, d);

        RoutingResult routed = GroupRouting.Route(Snapshot(centroids, d, ids), matrix);

        for (int i = 0; i < n; i++)
        {
            // The definition: normalise the row, take every cosine in float64, pick the largest.
            double norm = Math.Sqrt(Enumerable.Range(0, d).Sum(p => (double)rows[i * d + p] * rows[i * d + p]));
            double[] cosines = Enumerable.Range(0, k)
                .Select(g => Enumerable.Range(0, d).Sum(p => rows[i * d + p] / norm * centroids[g * d + p]))
                .ToArray();
            int[] order = Enumerable.Range(0, k).OrderByDescending(g => cosines[g]).ToArray();
            Assert.Equal(cosines[order[0]], routed.Similarities[i], 1e-5);
            if (k == 1)
            {
                Assert.Equal(ids[0], routed.GroupIds[i]);
                Assert.Equal(0, routed.RunnerUpGroupIds[i]);
                Assert.Equal(0f, routed.Margins[i]);
                continue;
            }

            Assert.Equal(cosines[order[0]] - cosines[order[1]], routed.Margins[i], 1e-5);
            if (cosines[order[0]] - cosines[order[1]] > 1e-5)
            {
                Assert.Equal(ids[order[0]], routed.GroupIds[i]);
            }

            if (k > 2 && cosines[order[1]] - cosines[order[2]] > 1e-5)
            {
                Assert.Equal(ids[order[1]], routed.RunnerUpGroupIds[i]);
            }
        }
    }

    [Fact]
    public void Route_TheGroupedBatchAgain_SameGroupsSimilaritiesAndOutlierFlags()
    {
        // Routing the very documents a grouping was made from must repeat its placements: the same
        // nearest centre, and the same outlier verdicts from the saved median and MAD.
        EmbeddingMatrix unit = TestData.UnitClusters(seed: 3, n: 1200, d: 48, trueGroups: 6, noise: 0.12, out _);
        float[] copy = (float[])unit.Values.Clone();
        var input = new GroupingInput(
            Enumerable.Range(0, 1200).Select(i => $"d{i}").ToArray(),
            Enumerable.Range(0, 1200).Select(i => $"ticket words {i % 6}").ToArray(),
            unit,
            new GroupingOptions { GroupCount = 6, MaxIterations = 200 });
        GroupingResult result = new GroupingPipeline().Run(input);
        Assert.True(result.Statistics.Converged);
        GroupingSnapshot snapshot = GroupingSnapshot.Capture(result, input.Options);

        RoutingResult routed = GroupRouting.Route(snapshot, new EmbeddingMatrix(copy, 1200, 48));

        int outliers = 0;
        for (int i = 0; i < 1200; i++)
        {
            DocumentPlacement placed = result.Documents[i];
            Assert.Equal(placed.GroupId, routed.GroupIds[i]);
            Assert.Equal(placed.Similarity, routed.Similarities[i], 1e-5f);
            Assert.Equal(placed.IsOutlier, routed.IsOutlier[i]);
            outliers += routed.IsOutlier[i] ? 1 : 0;
        }

        output.WriteLine($"{outliers} of 1200 flagged in both");
    }

    [Fact]
    public void Route_DocumentFarFromEveryCentre_FitsNoGroup()
    {
        // Two groups on the first two axes whose members sit at cosine 0.9 ± 0.02 (median, MAD); a document at
        // between them and off the plane (cosine 0.69 to both) scores 0.6745 × (0.69 − 0.9) / 0.02 ≈ −7.0, beyond −3.5.
        float[] centroids = [1, 0, 0, 0, 1, 0];
        float[] rows = [0.9f, 0.4359f, 0, 1, 1, 0.3f, 0.9f, 0, 0.4359f];
        RoutingResult routed = GroupRouting.Route(Snapshot(centroids, 3), new EmbeddingMatrix(rows, 3, 3));

        Assert.Equal([false, true, false], routed.IsOutlier);
        Assert.Equal(1, routed.GroupIds[0]);
        Assert.Equal(1, routed.GroupIds[2]);
    }

    [Fact]
    public void Route_GroupSmallerThanRuleMinimum_NeverFlags()
    {
        float[] centroids = [1, 0, 0, 0, 1, 0];
        var tiny = Snapshot(centroids, 3, size: GroupingDefaults.OutlierMinimumGroupSize - 1);
        RoutingResult routed = GroupRouting.Route(tiny, new EmbeddingMatrix([1, 1, 5], 1, 3));

        Assert.False(routed.IsOutlier[0]);
    }

    [Fact]
    public void Route_OtherDimension_ThrowsNamingBoth()
    {
        var exception = Assert.Throws<ArgumentException>(() =>
            GroupRouting.Route(Snapshot([1, 0, 0, 0, 1, 0], 3), new EmbeddingMatrix(new float[8], 2, 4)));
        Assert.Contains("4 dimensions", exception.Message);
        Assert.Contains("3", exception.Message);
    }

    [Fact]
    public void Route_TenThousandBy384IntoHundredGroups_WellUnderASecond()
    {
        // The issue's figure: 10,000 documents of 384 dimensions into 100 groups, in-process. The best of
        // three runs is printed and must stay well under one second on this shared 2-core machine.
        const int n = 10_000, d = 384, k = 100;
        GroupingSnapshot snapshot = Snapshot(UnitCentroids(seed: 9, k, d), d);
        var (rows, _) = TestData.UniformValued(seed: 10, n, 0, d);
        TimeSpan best = TimeSpan.MaxValue;
        for (int run = 0; run < 3; run++)
        {
            var matrix = new EmbeddingMatrix((float[])rows.Clone(), n, d);
            var stopwatch = Stopwatch.StartNew();
            RoutingResult routed = GroupRouting.Route(snapshot, matrix);
            stopwatch.Stop();
            Assert.Equal(n, routed.Count);
            best = stopwatch.Elapsed < best ? stopwatch.Elapsed : best;
        }

        // A Debug build runs the kernels unoptimised (about 6× slower here); CI and the figure in the docs use Release.
        bool optimised = typeof(GroupRouting).Assembly.GetCustomAttribute<DebuggableAttribute>()?.IsJITOptimizerDisabled != true;
        TimeSpan limit = optimised ? TimeSpan.FromMilliseconds(500) : TimeSpan.FromSeconds(5);
        output.WriteLine($"routed {n:N0} × {d} into {k} groups in {best.TotalMilliseconds:F1} ms (best of 3, normalisation included; {(optimised ? "Release" : "Debug")} build)");
        Assert.True(best < limit, $"routing took {best.TotalMilliseconds:F0} ms; the limit for this build is {limit.TotalMilliseconds:F0} ms");
    }
}
