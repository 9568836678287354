using BenchmarkDotNet.Running;
using TopicGroups.Benchmarks;

// Quick modes (plain stopwatch, seconds):
//   gflops [n d k]      the assignment kernel's GFLOP/s per path, default 100000 384 100, plus the FMA peak
//   fit [threads]       full fits: 20k x 384 k = 32 and 100k x 384 k = 100, 20 iterations, 1 restart
//   seeding [threads]   the same fits with k-means++ on every row and on the seeding sample, 3 seeds each
//   allocations FILE.npy k iterations seed [threads]   MB allocated by the pipeline and its heavier stages
//   load [clients seconds [kill-after-seconds]]   N clients grouping and saving against the server process on
//                       127.0.0.1 for a fixed time (default 8 clients, 60 s); with a third number the server is
//                       killed then and restarted on the same SQLite file (docs/operations.md, "Load and faults")
// Anything else goes to BenchmarkDotNet, e.g. `-- --filter *BlockScores*`.
if (args.Length > 0 && args[0] == "load")
{
    var settings = new TopicGroups.Benchmarks.Load.LoadSettings
    {
        Clients = args.Length > 1 ? int.Parse(args[1]) : 8,
        Duration = TimeSpan.FromSeconds(args.Length > 2 ? double.Parse(args[2]) : 60),
        KillAfter = args.Length > 3 ? TimeSpan.FromSeconds(double.Parse(args[3])) : null,
    };
    string folder = Directory.CreateTempSubdirectory("topicgroups-load-").FullName;
    try
    {
        var report = await TopicGroups.Benchmarks.Load.LoadRun.RunAsync(
            settings, TopicGroups.Benchmarks.Load.ServerProcess.DefaultExecutable, folder, Console.Out);
        Console.Write(report.ToText());
        return report.Errors == 0 && report.RepliesWithMissingGrouping == 0 && report.RepliesWithWrongGrouping == 0 && report.UnaccountedGroupings == 0 ? 0 : 1;
    }
    finally
    {
        Directory.Delete(folder, recursive: true);
    }
}

if (args.Length > 0 && args[0] == "gflops")
{
    int n = args.Length > 1 ? int.Parse(args[1]) : 100_000;
    int d = args.Length > 2 ? int.Parse(args[2]) : 384;
    int k = args.Length > 3 ? int.Parse(args[3]) : 100;
    QuickMeasurements.Gflops(n, d, k, passes: 5);
    return 0;
}

if (args.Length > 0 && args[0] == "fit")
{
    int threads = args.Length > 1 ? int.Parse(args[1]) : Environment.ProcessorCount;
    QuickMeasurements.Fit(20_000, 384, 32, iterations: 20, threads);
    QuickMeasurements.Fit(100_000, 384, 100, iterations: 20, threads);
    return 0;
}

if (args.Length > 0 && args[0] == "seeding")
{
    int threads = args.Length > 1 ? int.Parse(args[1]) : Environment.ProcessorCount;
    QuickMeasurements.SeedingComparisonSeeds = args.Length > 2 ? ulong.Parse(args[2]) : 3;
    QuickMeasurements.Seeding(20_000, 384, 32, iterations: 20, threads);
    if (args.Length <= 3 || args[3] != "small")
    {
        QuickMeasurements.Seeding(100_000, 384, 100, iterations: 20, threads);
    }
    return 0;
}

if (args.Length > 0 && args[0] == "study")
{
    // study FILE.npy k iterations seeds [threads [variant,variant...]]: objective and time of seeding variants on a real file
    var matrix = NpyMatrix.Load(args[1]);
    TopicGroups.Core.Vectors.RowNormalisation.NormaliseInPlace(matrix);
    int threads = args.Length > 5 ? int.Parse(args[5]) : Environment.ProcessorCount;
    if (args.Length > 6)
    {
        QuickMeasurements.StudyVariants = args[6].Split(',');
    }

    QuickMeasurements.Study(matrix, int.Parse(args[2]), int.Parse(args[3]), ulong.Parse(args[4]), threads);
    return 0;
}

if (args.Length > 0 && args[0] == "allocations")
{
    // allocations FILE.npy k iterations seed [threads]: bytes allocated by the pipeline and its heavier stages
    var matrix = NpyMatrix.Load(args[1]);
    TopicGroups.Core.Vectors.RowNormalisation.NormaliseInPlace(matrix);
    int threads = args.Length > 5 ? int.Parse(args[5]) : Environment.ProcessorCount;
    PipelineAllocations.Run(matrix, int.Parse(args[2]), int.Parse(args[3]), ulong.Parse(args[4]), threads);
    return 0;
}

if (args.Length > 0 && args[0] == "profile")
{
    // profile FILE.npy k iterations seed [threads [nopruning]]: seconds per phase of one fit
    var matrix = NpyMatrix.Load(args[1]);
    TopicGroups.Core.Vectors.RowNormalisation.NormaliseInPlace(matrix);
    int threads = args.Length > 5 ? int.Parse(args[5]) : Environment.ProcessorCount;
    bool pruning = args.Length <= 6 || args[6] != "nopruning";
    QuickMeasurements.Profile(matrix, int.Parse(args[2]), int.Parse(args[3]), ulong.Parse(args[4]), threads, pruning);
    return 0;
}

if (args.Length > 0 && (args[0] == "choosek" || args[0] == "choosek-search"))
{
    // choosek X.npy LABELS.npy k,k,k [threads]: candidate fit vs full fit per count (silhouette, NMI vs labels)
    // choosek-search X.npy LABELS.npy min max [threads]: the search, its pick and the NMI of the final fit
    var matrix = NpyMatrix.Load(args[1]);
    TopicGroups.Core.Vectors.RowNormalisation.NormaliseInPlace(matrix);
    int[] labels = NpyMatrix.Load(args[2]).Values.Select(v => (int)v).ToArray();
    if (args[0] == "choosek")
    {
        int threads = args.Length > 4 ? int.Parse(args[4]) : Environment.ProcessorCount;
        GroupCountStudy.Run(matrix, labels, args[3].Split(',').Select(int.Parse).ToArray(), threads);
    }
    else
    {
        int threads = args.Length > 5 ? int.Parse(args[5]) : Environment.ProcessorCount;
        GroupCountStudy.Search(matrix, labels, int.Parse(args[3]), int.Parse(args[4]), threads);
    }

    return 0;
}

BenchmarkSwitcher.FromAssembly(typeof(BlockScoresBenchmarks).Assembly).Run(args);
return 0;
