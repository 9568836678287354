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

    /// <summary>
    /// Variants of a fit on one matrix, interleaved (for each seed, every variant in turn) so that load drift on a
    /// shared machine hits them alike: median wall and process CPU seconds, seeding seconds, final reassigned
    /// objective. A variant name holds tokens: "plain" (k-means++ without candidates), "all" (seed on every row),
    /// "noprune" (every pass scores every row), "force" (prune whatever k and however far centroids move),
    /// "fromN" (prune from N groups up, once centroids move little, as the default does from PruningMinimumGroups).
    /// </summary>
    public static void Study(EmbeddingMatrix matrix, int k, int iterations, ulong seeds, int threads)
    {
        var results = StudyVariants.ToDictionary(v => v, _ => new List<(double Objective, double Wall, double Cpu, double Seeding)>());
        using var process = Process.GetCurrentProcess();
        for (ulong seed = 1; seed <= seeds; seed++)
        {
            foreach (string variant in StudyVariants)
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
                    SeedCandidates = variant.Contains("plain") ? 1 : 0,
                    DisablePruning = variant.Contains("noprune"),
                    ForcePruning = variant.Contains("force"),
                    PruningFromGroups = variant.Contains("from") ? int.Parse(variant[(variant.IndexOf("from") + 4)..].Split('-')[0]) : SphericalKMeansOptions.PruningMinimumGroups,
                    SeedingSampleRowsPerGroup = variant.Contains("per") ? int.Parse(variant[(variant.IndexOf("per") + 3)..].Split('-')[0]) : SeedingPool.SampleRowsPerGroup,
                };
                options = StudyOptions(options, variant);
                process.Refresh();
                TimeSpan cpuBefore = process.TotalProcessorTime;
                ClusteringResult result = SphericalKMeans.Fit(matrix, options);
                process.Refresh();
                double cpu = (process.TotalProcessorTime - cpuBefore).TotalSeconds;
                double objective = NearestCentroid.Assign(matrix, result.Centroids, maxDegreeOfParallelism: threads);
                results[variant].Add((objective, result.TotalTime.TotalSeconds, cpu, result.SeedingTime.TotalSeconds));
            }
        }

        foreach ((string variant, var runs) in results)
        {
            var objectives = runs.Select(r => r.Objective).ToList();
            Console.WriteLine(
                $"{variant,-22} objective median {Median(objectives):F5} (min {objectives.Min():F5}, max {objectives.Max():F5}), " +
                $"wall median {Median(runs.Select(r => r.Wall).ToList()):F3} s, cpu median {Median(runs.Select(r => r.Cpu).ToList()):F3} s, " +
                $"seeding {Median(runs.Select(r => r.Seeding).ToList()):F3} s");
        }
    }

    public static string[] StudyVariants { get; set; } = ["greedy-prune", "greedy-noprune"];

    public static Func<SphericalKMeansOptions, string, SphericalKMeansOptions> StudyOptions { get; set; } = (o, _) => o;

    private static double Median(List<double> values)
    {
        var sorted = values.Order().ToArray();
        return sorted.Length % 2 == 1 ? sorted[sorted.Length / 2] : (sorted[sorted.Length / 2 - 1] + sorted[sorted.Length / 2]) / 2;
    }

    /// <summary>
    /// Where a fit's time goes, phase by phase, on one matrix: seeding, then per Lloyd iteration the assignment
    /// (blocked product + argmax), sizes, empty-group repair and the centroid update; one restart, exactly
    /// <paramref name="iterations"/> iterations, the same calls SphericalKMeans.Fit makes.
    /// </summary>
    public static void Profile(EmbeddingMatrix matrix, int k, int iterations, ulong seed, int threads, bool pruning)
    {
        // Untimed warm-up on the first rows, as `topicgroups bench` does, so the figures show compiled code, not the JIT.
        int warmRows = Math.Min(matrix.Rows, 4096);
        var warm = new EmbeddingMatrix(matrix.Values.AsSpan(0, warmRows * matrix.Dimensions).ToArray(), warmRows, matrix.Dimensions);
        for (int round = 0; round < 2; round++)
        {
            ProfileOnce(warm, Math.Min(k, warmRows / 4), iterations, seed, threads, pruning, print: false);
            Thread.Sleep(300);
        }

        ProfileOnce(matrix, k, iterations, seed, threads, pruning, print: true);
    }

    private static void ProfileOnce(EmbeddingMatrix matrix, int k, int iterations, ulong seed, int threads, bool pruning, bool print)
    {
        var options = new SphericalKMeansOptions { GroupCount = k, Seed = seed, MaxDegreeOfParallelism = threads };
        long start = Stopwatch.GetTimestamp();
        var ws = new ClusteringWorkspace(matrix, k, threads, sampleForSeeding: true, options.ResolveSeedCandidates(), pruning);
        double setup = Stopwatch.GetElapsedTime(start).TotalSeconds;

        start = Stopwatch.GetTimestamp();
        SplitMix64 random = SplitMix64.ForStream(seed, 0);
        ws.Seeding.Draw(ref random);
        double draw = Stopwatch.GetElapsedTime(start).TotalSeconds;
        start = Stopwatch.GetTimestamp();
        KMeansPlusPlusSeeding.Seed(ws.Seeding, ws.Centroids, k, options.ResolveSeedCandidates(), ref random, CancellationToken.None);
        double seeding = Stopwatch.GetElapsedTime(start).TotalSeconds;

        double assign = 0, sizes = 0, repair = 0, update = 0;
        using var process = Process.GetCurrentProcess();
        TimeSpan cpuBefore = process.TotalProcessorTime;
        Array.Fill(ws.Assignments, -1);
        double objective = 0;
        var perIteration = new List<string>();
        for (int iteration = 1; iteration <= iterations; iteration++)
        {
            long t0 = Stopwatch.GetTimestamp();
            (int reassigned, int scored) = GroupAssignment.AssignAll(ws);
            long t1 = Stopwatch.GetTimestamp();
            CentroidUpdate.CountSizes(ws);
            long t2 = Stopwatch.GetTimestamp();
            EmptyGroupRepair.Repair(ws);
            long t3 = Stopwatch.GetTimestamp();
            objective = CentroidUpdate.Update(ws);
            long t4 = Stopwatch.GetTimestamp();
            assign += Stopwatch.GetElapsedTime(t0, t1).TotalSeconds;
            sizes += Stopwatch.GetElapsedTime(t1, t2).TotalSeconds;
            repair += Stopwatch.GetElapsedTime(t2, t3).TotalSeconds;
            update += Stopwatch.GetElapsedTime(t3, t4).TotalSeconds;
            AssignmentBounds? b = ws.Bounds;
            string stages = b is not null && iteration > 1
                ? $"{b.Skipped.Sum()}/{b.SettledByJumpers.Sum()}/{b.SettledByNear.Sum()}/{scored}" +
                  $"(θmax {b.Angle.Max():F3}, θmed {b.Angle.Order().ElementAt(k / 2):F4}, jumpers {b.JumperCount})"
                : $"{scored}";
            perIteration.Add($"{iteration}:{reassigned}:{stages}[{Stopwatch.GetElapsedTime(t0, t1).TotalMilliseconds:F0}ms]");
        }

        process.Refresh();
        double iterationsCpu = (process.TotalProcessorTime - cpuBefore).TotalSeconds;
        start = Stopwatch.GetTimestamp();
        GroupAssignment.ScoreAssigned(ws);
        double score = Stopwatch.GetElapsedTime(start).TotalSeconds;
        double total = setup + draw + seeding + assign + sizes + repair + update + score;
        double flops = 2.0 * matrix.Rows * matrix.Dimensions * k;
        if (!print)
        {
            return;
        }

        Console.WriteLine($"profile {matrix.Rows} x {matrix.Dimensions}, k = {k}, {iterations} iterations, {threads} thread(s), seed {seed}, pruning {(pruning ? "on" : "off")}: total {total:F3} s, objective {objective:F5}");
        Console.WriteLine($"  workspace   {setup,7:F3} s");
        Console.WriteLine($"  sample draw {draw,7:F3} s");
        Console.WriteLine($"  seeding     {seeding,7:F3} s  ({ws.Seeding.N} pool rows, {options.ResolveSeedCandidates()} candidates per step)");
        Console.WriteLine($"  assignment  {assign,7:F3} s  ({assign / iterations * 1000:F1} ms per iteration, {flops * iterations / assign / 1e9:F1} GFLOP/s)");
        Console.WriteLine($"  sizes       {sizes,7:F3} s");
        Console.WriteLine($"  repair      {repair,7:F3} s");
        Console.WriteLine($"  update      {update,7:F3} s  ({update / iterations * 1000:F1} ms per iteration)");
        Console.WriteLine($"  iterations  {iterationsCpu,7:F3} s of process CPU time (all threads)");
        Console.WriteLine($"  final score {score,7:F3} s");
        Console.WriteLine($"  iteration:reassigned:bounds/jumpers/near/full[ms]: {string.Join(' ', perIteration)}");
    }
}
