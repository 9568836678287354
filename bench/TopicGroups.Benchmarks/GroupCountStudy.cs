using System.Diagnostics;
using System.Globalization;
using TopicGroups.Core.Clustering;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Benchmarks;

/// <summary>
/// How good is each point of the group-count curve? For a labelled .npy matrix: the silhouette of the true
/// labelling, then per count the search's cheap candidate fit against a full fit (the final run's settings),
/// each with its sampled silhouette and NMI against the labels; then the search itself and its pick.
/// </summary>
internal static class GroupCountStudy
{
    public static void Run(EmbeddingMatrix unitRows, int[] labels, int[] counts, int threads)
    {
        var culture = CultureInfo.InvariantCulture;
        var random = SplitMix64.ForStream(0, int.MaxValue - 1);
        int[] sample = Silhouette.SampleRows(unitRows.Rows, GroupCountSearchDefaults.SilhouetteSampleSize, ref random);
        int trueK = labels.Max() + 1;
        double trueSilhouette = Silhouette.Compute(unitRows, labels, trueK, sample, threads).Mean;
        Console.WriteLine(string.Create(culture, $"rows {unitRows.Rows} x {unitRows.Dimensions}, true groups {trueK}, true labelling silhouette {trueSilhouette:F4}"));
        Console.WriteLine("k\tcand_sil\tcand_nmi\tcand_s\tfull_sil\tfull_nmi\tfull_s\tmoved_sil\tmoved_nmi\tmoves\tmoved_s");
        foreach (int k in counts)
        {
            (double cs, double cn, double ct) = FitAndScore(unitRows, labels, k, sample, threads, restarts: GroupCountSearchDefaults.CandidateRestartCount, GroupCountSearchDefaults.CandidateMaxIterations, GroupCountSearchDefaults.CandidateConvergenceTolerance);
            (double fs, double fn, double ft) = FitAndScore(unitRows, labels, k, sample, threads, SphericalKMeansDefaults.RestartCount, SphericalKMeansDefaults.MaxIterations, SphericalKMeansDefaults.ConvergenceTolerance);
            (double ms, double mn, double mt, int moves) = CandidateWithMoves(unitRows, labels, k, sample, threads);
            Console.WriteLine(string.Create(culture, $"{k}\t{cs:F4}\t{cn:F3}\t{ct:F2}\t{fs:F4}\t{fn:F3}\t{ft:F2}\t{ms:F4}\t{mn:F3}\t{moves}\t{mt:F2}"));
        }
    }

    public static void Search(EmbeddingMatrix unitRows, int[] labels, int minimum, int maximum, int threads)
    {
        var culture = CultureInfo.InvariantCulture;
        // Untimed warm-up on the first 2,000 rows so that compilation is not charged to the search.
        var warmUp = new EmbeddingMatrix(unitRows.Values[..(Math.Min(2000, unitRows.Rows) * unitRows.Dimensions)], Math.Min(2000, unitRows.Rows), unitRows.Dimensions);
        GroupCountSearchResult warmed = GroupCountSearch.Search(warmUp, new GroupCountSearchOptions { MaximumGroupCount = 12, MaxDegreeOfParallelism = threads });
        SphericalKMeans.Fit(warmUp, new SphericalKMeansOptions { GroupCount = warmed.ChosenGroupCount, MaxDegreeOfParallelism = threads, InitialCentroids = warmed.ChosenCentroids });
        SphericalKMeans.Fit(warmUp, new SphericalKMeansOptions { GroupCount = 12, MaxDegreeOfParallelism = threads });
        TimeSpan cpu0 = Process.GetCurrentProcess().TotalProcessorTime;
        TimeSpan lastCpu = cpu0;
        long start = Stopwatch.GetTimestamp();
        GroupCountSearchResult result = GroupCountSearch.Search(
            unitRows,
            new GroupCountSearchOptions
            {
                MinimumGroupCount = minimum,
                MaximumGroupCount = maximum,
                MaxDegreeOfParallelism = threads,
                CandidateMoveAttempts = int.TryParse(Environment.GetEnvironmentVariable("CHOOSEK_ATTEMPTS"), out int attempts) ? attempts : GroupCountSearchDefaults.CandidateMoveAttempts,
                CandidateMoveLimit = int.TryParse(Environment.GetEnvironmentVariable("CHOOSEK_MOVES"), out int moves) ? moves : GroupCountSearchDefaults.CandidateMoveLimit,
            },
            c =>
            {
                TimeSpan now = Process.GetCurrentProcess().TotalProcessorTime;
                Console.Write(string.Create(culture, $"  cpu {(now - lastCpu).TotalSeconds:F2}s"));
                lastCpu = now;
                Console.WriteLine(string.Create(culture, $"  tried {c.GroupCount}\tsil {c.Silhouette:F4}\tobj {c.Objective:F4}\tmoves {c.Moves}\twarm {c.WarmStarted}\tse {c.SilhouetteStandardError:F4}\t{c.Elapsed.TotalSeconds:F2}s"));
            });
        double searchSeconds = Stopwatch.GetElapsedTime(start).TotalSeconds;
        TimeSpan cpu1 = Process.GetCurrentProcess().TotalProcessorTime;
        start = Stopwatch.GetTimestamp();
        ClusteringResult final = SphericalKMeans.Fit(unitRows, new SphericalKMeansOptions { GroupCount = result.ChosenGroupCount, MaxDegreeOfParallelism = threads, InitialCentroids = result.ChosenCentroids });
        double finalSeconds = Stopwatch.GetElapsedTime(start).TotalSeconds;
        TimeSpan cpu2 = Process.GetCurrentProcess().TotalProcessorTime;
        ClusteringResult plain = SphericalKMeans.Fit(unitRows, new SphericalKMeansOptions { GroupCount = result.ChosenGroupCount, MaxDegreeOfParallelism = threads });
        TimeSpan cpu3 = Process.GetCurrentProcess().TotalProcessorTime;
        double plainNmi = PartitionAgreement.NormalisedMutualInformation(labels, plain.Assignments);
        Console.WriteLine(string.Create(culture,
            $"cpu: search {(cpu1 - cpu0).TotalSeconds:F2}s, final fit from the chosen centres {(cpu2 - cpu1).TotalSeconds:F2}s, one plain grouping at that count {(cpu3 - cpu2).TotalSeconds:F2}s (NMI {plainNmi:F3}); auto / plain = {(cpu2 - cpu0).TotalSeconds / (cpu3 - cpu2).TotalSeconds:F2}"));
        double nmi = PartitionAgreement.NormalisedMutualInformation(labels, final.Assignments);
        Console.WriteLine(string.Create(culture,
            $"pick {result.ChosenGroupCount} (best {result.BestGroupCount}, {result.Reason}); NMI of the final fit {nmi:F3}; search {searchSeconds:F2}s, final fit {finalSeconds:F2}s, ratio {(searchSeconds + finalSeconds) / finalSeconds:F2}"));
        Console.WriteLine(result.Explanation);
    }

    private static (double Silhouette, double Nmi, double Seconds, int Moves) CandidateWithMoves(EmbeddingMatrix unitRows, int[] labels, int k, int[] sample, int threads)
    {
        long start = Stopwatch.GetTimestamp();
        var options = new SphericalKMeansOptions
        {
            GroupCount = k,
            RestartCount = GroupCountSearchDefaults.CandidateRestartCount,
            MaxIterations = GroupCountSearchDefaults.CandidateMaxIterations,
            ConvergenceTolerance = GroupCountSearchDefaults.CandidateConvergenceTolerance,
            MaxDegreeOfParallelism = threads,
        };
        ClusteringResult fit = SphericalKMeans.Fit(unitRows, options);
        fit = SplitMergeRefinement.Refine(unitRows, fit, options, GroupCountSearchDefaults.CandidateMoveLimit, GroupCountSearchDefaults.CandidateMoveAttempts, out int moves);
        double seconds = Stopwatch.GetElapsedTime(start).TotalSeconds;
        double silhouette = Silhouette.Compute(unitRows, fit.Assignments, k, sample, threads).Mean;
        return (silhouette, PartitionAgreement.NormalisedMutualInformation(labels, fit.Assignments), seconds, moves);
    }

    private static (double Silhouette, double Nmi, double Seconds) FitAndScore(
        EmbeddingMatrix unitRows, int[] labels, int k, int[] sample, int threads, int restarts, int iterations, double tolerance)
    {
        long start = Stopwatch.GetTimestamp();
        ClusteringResult fit = SphericalKMeans.Fit(
            unitRows,
            new SphericalKMeansOptions { GroupCount = k, RestartCount = restarts, MaxIterations = iterations, ConvergenceTolerance = tolerance, MaxDegreeOfParallelism = threads });
        double seconds = Stopwatch.GetElapsedTime(start).TotalSeconds;
        double silhouette = Silhouette.Compute(unitRows, fit.Assignments, k, sample, threads).Mean;
        return (silhouette, PartitionAgreement.NormalisedMutualInformation(labels, fit.Assignments), seconds);
    }
}
