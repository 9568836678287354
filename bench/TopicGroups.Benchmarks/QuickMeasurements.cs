using System.Diagnostics;
using System.Runtime.Intrinsics;
using TopicGroups.Core.Clustering;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Benchmarks;

/// <summary>Plain stopwatch measurements for a quick look, outside BenchmarkDotNet.</summary>
internal static class QuickMeasurements
{
    /// <summary>
    /// GFLOP/s of each kernel path on n × d by d × k (2·n·d·k flops per pass), one thread, walking the rows
    /// in fit-sized blocks; best of several passes. Also the machine's measured FMA peak for comparison.
    /// </summary>
    public static void Gflops(int n, int d, int k, int passes)
    {
        Console.WriteLine($"kernel: {n} x {d} rows by {d} x {k} centroids, one thread, best of {passes} passes");
        (float[] rows, float[] centroids) = KernelData.Uniform(seed: 7, n, k, d);
        var panel = new CentroidPanel(k, d);
        panel.Pack(centroids);
        const int blockRows = RowBlocks.BlockRows;
        float[] scores = new float[blockRows * k];
        double flops = 2.0 * n * d * k;

        var paths = new List<(string Name, Action<ReadOnlySpan<float>> Run)>();
        if (Vector512.IsHardwareAccelerated)
        {
            paths.Add(("Vector512Path", block => BlockScores.Vector512Path(block, panel, scores, k)));
        }

        if (Vector256.IsHardwareAccelerated)
        {
            paths.Add(("Vector256Path", block => BlockScores.Vector256Path(block, panel, scores, k)));
        }

        foreach ((string name, Action<ReadOnlySpan<float>> run) in paths)
        {
            double best = double.MaxValue;
            for (int pass = 0; pass < passes; pass++)
            {
                long start = Stopwatch.GetTimestamp();
                for (int i = 0; i < n; i += blockRows)
                {
                    int length = Math.Min(blockRows, n - i);
                    run(rows.AsSpan(i * d, length * d));
                }

                best = Math.Min(best, Stopwatch.GetElapsedTime(start).TotalSeconds);
            }

            Console.WriteLine($"{name,-14} {best * 1000,8:F1} ms  {flops / best / 1e9,7:F1} GFLOP/s");
        }

        // The scalar twin on a slice only: it is the definition, not a contender.
        int scalarRows = Math.Min(n, 2_000);
        long scalarStart = Stopwatch.GetTimestamp();
        for (int i = 0; i < scalarRows; i += blockRows)
        {
            int length = Math.Min(blockRows, scalarRows - i);
            BlockScores.Scalar(rows.AsSpan(i * d, length * d), centroids, d, scores);
        }

        double scalarSeconds = Stopwatch.GetElapsedTime(scalarStart).TotalSeconds;
        Console.WriteLine($"{"Scalar",-14} {2.0 * scalarRows * d * k / scalarSeconds / 1e9,7:F1} GFLOP/s (on {scalarRows} rows)");
        Console.WriteLine($"FMA peak (measured, one thread): {FmaPeak.Measure():F1} GFLOP/s");
    }

    /// <summary>Full fits on synthetic unit rows with exactly <paramref name="iterations"/> iterations and one restart.</summary>
    public static void Fit(int n, int d, int k, int iterations, int threads, bool seedOnEveryRow = false, ulong seed = 1)
    {
        EmbeddingMatrix matrix = ClusteredUnitRows(n, d, k);
        var options = new SphericalKMeansOptions
        {
            GroupCount = k,
            RestartCount = 1,
            MaxIterations = iterations,
            RunAllIterations = true,
            Seed = seed,
            MaxDegreeOfParallelism = threads,
            SeedOnEveryRow = seedOnEveryRow,
        };

        ClusteringResult result = SphericalKMeans.Fit(matrix, options);
        double iterationSeconds = result.IterationHistory.Sum(s => s.Elapsed.TotalSeconds);
        Console.WriteLine(
            $"fit {n} x {d}, k = {k}, {iterations} iterations, {threads} thread(s){(seedOnEveryRow ? ", seeding on every row" : "")}, seed {seed}: total {result.TotalTime.TotalMilliseconds:F0} ms, " +
            $"seeding {result.SeedingTime.TotalMilliseconds:F0} ms, iterations {iterationSeconds * 1000:F0} ms " +
            $"({iterationSeconds * 1000 / iterations:F1} ms each, {2.0 * n * d * k * iterations / iterationSeconds / 1e9:F1} GFLOP/s in assignment-equivalent flops), objective {result.Objective:F5}");
    }

    public static ulong SeedingComparisonSeeds { get; set; } = 3;

    /// <summary>Sampled against whole-data k-means++ seeding: time and final objective, several seeds.</summary>
    public static void Seeding(int n, int d, int k, int iterations, int threads)
    {
        for (ulong seed = 1; seed <= SeedingComparisonSeeds; seed++)
        {
            Fit(n, d, k, iterations, threads, seedOnEveryRow: true, seed);
            Fit(n, d, k, iterations, threads, seedOnEveryRow: false, seed);
        }
    }

    private static readonly Dictionary<(int, int, int), EmbeddingMatrix> Matrices = [];

    /// <summary>Clustered synthetic rows (2k true directions of unequal size, noise 0.15 per coordinate), normalised; cached per shape.</summary>
    private static EmbeddingMatrix ClusteredUnitRows(int n, int d, int k)
    {
        if (!Matrices.TryGetValue((n, d, k), out EmbeddingMatrix? matrix))
        {
            matrix = new EmbeddingMatrix(KernelData.Clustered(seed: 11, n, d, trueGroups: 2 * k, noise: 0.15), n, d);
            RowNormalisation.NormaliseInPlace(matrix);
            Matrices[(n, d, k)] = matrix;
        }

        return matrix;
    }

    /// <summary>Seeding variants on one matrix: time, seeding objective and final reassigned objective, seeds 1..seeds.</summary>
    public static void Study(EmbeddingMatrix matrix, int k, int iterations, ulong seeds, int threads)
    {
        foreach (string variant in StudyVariants)
        {
            var objectives = new List<double>();
            var times = new List<double>();
            var seedingTimes = new List<double>();
            for (ulong seed = 1; seed <= seeds; seed++)
            {
                var options = new SphericalKMeansOptions
                {
                    GroupCount = k,
                    RestartCount = 1,
                    MaxIterations = iterations,
                    RunAllIterations = true,
                    Seed = seed,
                    MaxDegreeOfParallelism = threads,
                    SeedOnEveryRow = variant.Contains("all"),
                    SeedCandidates = variant.StartsWith("plain") ? 1 : 0,
                };
                options = StudyOptions(options, variant);
                ClusteringResult result = SphericalKMeans.Fit(matrix, options);
                objectives.Add(NearestCentroid.Assign(matrix, result.Centroids, maxDegreeOfParallelism: threads));
                times.Add(result.TotalTime.TotalSeconds);
                seedingTimes.Add(result.SeedingTime.TotalSeconds);
            }

            Console.WriteLine(
                $"{variant,-22} objective median {Median(objectives):F5} (min {objectives.Min():F5}, max {objectives.Max():F5}), " +
                $"seconds median {Median(times):F3}, seeding {Median(seedingTimes):F3}");
        }
    }

    public static string[] StudyVariants { get; set; } = ["plain-sample", "greedy-sample", "plain-all", "greedy-all"];

    public static Func<SphericalKMeansOptions, string, SphericalKMeansOptions> StudyOptions { get; set; } = (o, _) => o;

    private static double Median(List<double> values)
    {
        var sorted = values.Order().ToArray();
        return sorted.Length % 2 == 1 ? sorted[sorted.Length / 2] : (sorted[sorted.Length / 2 - 1] + sorted[sorted.Length / 2]) / 2;
    }
}
