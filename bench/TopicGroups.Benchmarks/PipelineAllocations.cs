using System.Diagnostics;
using TopicGroups.Core.Clustering;
using TopicGroups.Core.Grouping;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Benchmarks;

/// <summary>
/// Bytes allocated (all threads, GC.GetTotalAllocatedBytes) by the whole pipeline and by its heavier stages
/// run alone on the same unit rows, with the gen-2 collections each set off. Large allocations after the
/// clustering are what start background full collections in a busy server.
/// </summary>
internal static class PipelineAllocations
{
    public static void Run(EmbeddingMatrix matrix, int k, int iterations, ulong seed, int threads)
    {
        int n = matrix.Rows;
        string[] ids = Enumerable.Range(0, n).Select(i => "r" + i).ToArray();
        string[] texts = new string[n];
        Array.Fill(texts, string.Empty);
        var options = new GroupingOptions { GroupCount = k, Seed = seed, MaxIterations = iterations, MaxDegreeOfParallelism = threads };

        // Warm-up on a slice so the figures do not include the runtime's own first-use allocations.
        int warmRows = Math.Min(n, 4096);
        var warm = new EmbeddingMatrix(matrix.Values.AsSpan(0, warmRows * matrix.Dimensions).ToArray(), warmRows, matrix.Dimensions);
        new GroupingPipeline().Run(new GroupingInput(ids[..warmRows], texts[..warmRows], warm, options with { GroupCount = Math.Min(k, warmRows) }));

        GroupingResult result = Measure("pipeline (whole run)", () => new GroupingPipeline().Run(new GroupingInput(ids, texts, matrix, options)));
        ClusteringResult clustering = Measure("  clustering (SphericalKMeans.Fit)", () => SphericalKMeans.Fit(matrix, options.ToClusteringOptions()));

        int[] sizes = new int[k];
        foreach (int g in clustering.Assignments)
        {
            sizes[g]++;
        }

        int[][] members = new int[k][];
        int[] filled = new int[k];
        for (int c = 0; c < k; c++)
        {
            members[c] = new int[sizes[c]];
        }

        for (int i = 0; i < n; i++)
        {
            int c = clustering.Assignments[i];
            members[c][filled[c]++] = i;
        }

        double[] cohesion = new double[k];
        int[] ids1 = Enumerable.Range(1, k).ToArray();
        Measure("  quality assessment", () => QualityAssessment.Assess(matrix, clustering, members, cohesion, ids1, options, CancellationToken.None));
        Measure("  terms", () => TopicGroups.Core.Terms.GroupTerms.TopTermsPerGroup(texts, clustering.Assignments, k, new TopicGroups.Core.Terms.GroupTermsOptions(), CancellationToken.None));
        GC.KeepAlive(result);
    }

    private static T Measure<T>(string label, Func<T> stage)
    {
        GC.Collect();
        GC.WaitForPendingFinalizers();
        long before = GC.GetTotalAllocatedBytes(precise: true);
        int gen2 = GC.CollectionCount(2);
        long start = Stopwatch.GetTimestamp();
        T value = stage();
        double seconds = Stopwatch.GetElapsedTime(start).TotalSeconds;
        long bytes = GC.GetTotalAllocatedBytes(precise: true) - before;
        Console.WriteLine($"{label,-36} {bytes / 1e6,9:F1} MB  {GC.CollectionCount(2) - gen2,3} gen-2  {seconds,6:F2} s");
        return value;
    }
}
