using System.CommandLine;
using System.Diagnostics;
using System.Globalization;
using System.Runtime;
using System.Text.Json;
using Grpc.Core;
using Grpc.Net.Client;
using TopicGroups.Cli.Input;
using TopicGroups.Client;
using TopicGroups.Core.Clustering;
using TopicGroups.Core.Grouping;
using TopicGroups.Core.Vectors;
using TopicGroups.Server;
using Proto = TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Commands;

/// <summary>What one timing run reads and asks for. Iterations null: the Core's default cap and convergence rule.</summary>
internal sealed record BenchRun(
    string EmbeddingsPath,
    int GroupCount,
    int? Iterations,
    ulong Seed,
    int RestartCount,
    int Threads,
    bool ThroughService,
    int MiniBatchSize = 0);

/// <summary>
/// <c>bench</c>: times the grouping of one .npy matrix and prints one JSON line. By default it runs the
/// Core's clustering in this process (no gRPC); with --through-service it also sends the same batch
/// through the gRPC service hosted in this process, so the transport's share of the time is visible.
/// </summary>
/// <remarks>
/// "objective" is computed the same way for every method (and as ../shared/peers/peers.py scores the
/// reference libraries): the returned centroids, a final reassignment of every row to its most similar
/// centroid, then the mean of those cosines. The matrix is read into one float[] and normalised in place:
/// the only float32 copy of the data in the default mode.
/// </remarks>
internal static class BenchCommand
{
    /// <summary>Rows of the untimed warm-up fit that compiles the hot code first (a library import does the same for the peers).</summary>
    public const int WarmUpRows = 2048;

    /// <summary>Service-then-in-process pairs timed with --through-service; the last pair gives the figures.</summary>
    public const int ServiceRounds = 2;

    /// <summary>
    /// Warm-up calls through the service (on the first <see cref="WarmUpRows"/> rows), 250 ms apart, as the in-process
    /// warm-up fits are: with one call, the timed send still ran the transport's code (the fingerprint, the finite
    /// check, protobuf parsing) in its instrumented tier while the background compiler worked beside it. At 100k × 384
    /// (4 interleaved pairs, 2026-12-02): 1.63 × with one call, 1.40 × with three, 1.40 × with six.
    /// </summary>
    public const int ServiceWarmUpCalls = 3;

    public static Command Create()
    {
        var embeddings = new Option<string>("--embeddings", "-e")
        {
            Description = "A .npy matrix (float32 or float64, shape (documents, dimensions)) to group.",
            Required = true,
        };
        var groups = new Option<int>("--groups", "-k") { Description = "Number of groups to form.", Required = true };
        var iterations = new Option<int?>("--iterations")
        {
            Description = "Run exactly this many refinement iterations per restart (no early stop). Default: the Core's cap and convergence rule.",
        };
        var seed = new Option<ulong>("--seed") { Description = "Seed for the initial centres. Default: 0." };
        var restarts = new Option<int>("--restarts")
        {
            Description = "Independent runs; the best is kept. Default: 1 (one run, as the reference libraries are timed).",
            DefaultValueFactory = _ => 1,
        };
        var threads = new Option<int>("--threads")
        {
            Description = "Threads for the Core. Default: every core.",
            DefaultValueFactory = _ => Environment.ProcessorCount,
        };
        var miniBatch = new Option<int>("--mini-batch")
        {
            Description = "Refine by mini-batches of this many rows (Sculley, 2010): --iterations then counts batches. Default: 0 (every iteration uses every row). In-process only.",
        };
        var throughService = new Option<bool>("--through-service")
        {
            Description = "Also send the batch through the gRPC service hosted in this process and report in-process against end-to-end seconds.",
        };

        var command = new Command("bench", "Time the grouping of a .npy matrix and print one JSON line (seconds, objective, peak memory).")
        {
            embeddings, groups, iterations, seed, restarts, threads, miniBatch, throughService,
        };
        GroupCommand.AddPositiveValidator(groups);
        GroupCommand.AddPositiveValidator(restarts);
        GroupCommand.AddPositiveValidator(threads);
        miniBatch.Validators.Add(result =>
        {
            if (result.Tokens.Count > 0 && result.GetValueOrDefault<int>() < 0)
            {
                result.AddError($"--mini-batch must be 0 (off) or a positive number of rows (got {result.GetValueOrDefault<int>()})");
            }
        });
        iterations.Validators.Add(result =>
        {
            if (result.Tokens.Count > 0 && result.GetValueOrDefault<int?>() < 1)
            {
                result.AddError($"--iterations must be at least 1 (got {result.GetValueOrDefault<int?>()})");
            }
        });

        command.SetAction((parseResult, cancellationToken) =>
        {
            var run = new BenchRun(
                parseResult.GetRequiredValue(embeddings),
                parseResult.GetValue(groups),
                parseResult.GetValue(iterations),
                parseResult.GetValue(seed),
                parseResult.GetValue(restarts),
                parseResult.GetValue(threads),
                parseResult.GetValue(throughService),
                parseResult.GetValue(miniBatch));
            return RunAsync(run, parseResult.InvocationConfiguration.Output, parseResult.InvocationConfiguration.Error, cancellationToken);
        });
        return command;
    }

    public static async Task<int> RunAsync(BenchRun run, TextWriter output, TextWriter error, CancellationToken cancellationToken)
    {
        try
        {
            long readStart = Stopwatch.GetTimestamp();
            float[] values = NpyReader.ReadAll(run.EmbeddingsPath, out int n, out int d);
            double readSeconds = Stopwatch.GetElapsedTime(readStart).TotalSeconds;
            string fileName = Path.GetFileName(run.EmbeddingsPath);
            if (d == 0 || n == 0)
            {
                throw new InputException($"{fileName}: shape ({n}, {d}) holds no embeddings; give at least one row of at least one value");
            }

            if (run.GroupCount > n)
            {
                throw new InputException($"--groups {run.GroupCount} is more than the {n} rows in {fileName}; ask for at most {n}");
            }

            var matrix = new EmbeddingMatrix(values, n, d);
            if (RowNormalisation.FindInvalidRow(matrix, out string? reason) is int badRow)
            {
                throw new InputException($"{fileName} row {badRow} {reason}; every row needs finite values, not all zero");
            }

            var fields = new Dictionary<string, object?>
            {
                ["mode"] = run.ThroughService ? "through_service" : "in_process",
                ["file"] = fileName,
                ["rows"] = n,
                ["dimensions"] = d,
                ["groups"] = run.GroupCount,
                ["seed"] = run.Seed,
                ["restarts"] = run.RestartCount,
                ["threads"] = run.Threads,
                ["iterations_requested"] = run.Iterations,
                ["mini_batch"] = run.MiniBatchSize,
                ["read_seconds"] = Round(readSeconds),
            };

            if (run.ThroughService && run.MiniBatchSize > 0)
            {
                throw new InputException("--mini-batch is an in-process option (the service has no such setting); drop --through-service or --mini-batch");
            }

            if (run.ThroughService)
            {
                await RunThroughServiceAsync(run, matrix, fields, cancellationToken);
            }
            else
            {
                RunInProcess(run, matrix, fields, cancellationToken);
            }

            long peak = ProcessMemory.PeakResidentBytes();
            long inputBytes = (long)n * d * sizeof(float);
            fields["input_bytes"] = inputBytes;
            fields["peak_memory_bytes"] = peak;
            fields["peak_memory_ratio"] = Math.Round((double)peak / inputBytes, 3);
            fields["processors"] = Environment.ProcessorCount;
            WriteJsonLine(output, fields);
            return ExitCodes.Success;
        }
        catch (InputException ex)
        {
            error.WriteLine(ex.Message);
            return ExitCodes.BadInput;
        }
        catch (OperationCanceledException) when (cancellationToken.IsCancellationRequested)
        {
            error.WriteLine("cancelled");
            return ExitCodes.Cancelled;
        }
        catch (RpcException ex)
        {
            foreach (string line in Output.RpcErrorText.Lines(ex, server: null))
            {
                error.WriteLine(line);
            }

            return ExitCodes.Failure;
        }
    }

    /// <summary>Normalise in place, fit, then score with a final reassignment; only normalise + fit are in "seconds".</summary>
    private static void RunInProcess(BenchRun run, EmbeddingMatrix matrix, Dictionary<string, object?> fields, CancellationToken cancellationToken)
    {
        fields["warmup_seconds"] = Round(WarmUp(matrix, run, cancellationToken));

        long? faultsBefore = ProcessMemory.MinorPageFaults();
        long start = Stopwatch.GetTimestamp();
        RowNormalisation.NormaliseInPlace(matrix);
        double normaliseSeconds = Stopwatch.GetElapsedTime(start).TotalSeconds;
        ClusteringResult result = SphericalKMeans.Fit(matrix, ClusteringOptions(run), progress: null, cancellationToken);
        double seconds = Stopwatch.GetElapsedTime(start).TotalSeconds;
        fields["page_faults"] = ProcessMemory.MinorPageFaults() - faultsBefore;

        long scoreStart = Stopwatch.GetTimestamp();
        double objective = NearestCentroid.Assign(matrix, result.Centroids, maxDegreeOfParallelism: run.Threads);
        double scoreSeconds = Stopwatch.GetElapsedTime(scoreStart).TotalSeconds;

        double iterationSeconds = result.IterationHistory.Sum(s => s.Elapsed.TotalSeconds);
        fields["seconds"] = Round(seconds);
        fields["seeding_seconds"] = Round(result.SeedingTime.TotalSeconds);
        fields["iteration_seconds"] = Round(iterationSeconds);
        fields["normalise_seconds"] = Round(normaliseSeconds);
        fields["iterations"] = result.Iterations;
        fields["converged"] = result.Converged;
        fields["objective"] = Math.Round(objective, 6);
        fields["fit_objective"] = Math.Round(result.Objective, 6);
        fields["score_seconds"] = Round(scoreSeconds);
        fields["assignment_gflops"] = iterationSeconds > 0
            ? Math.Round(2.0 * matrix.Rows * matrix.Dimensions * run.GroupCount * result.Iterations / iterationSeconds / 1e9, 1)
            : null;
    }

    /// <summary>
    /// Sends the raw batch through the service (client, loopback HTTP/2, validation, Core, mapping, response),
    /// then runs the same pipeline with the same options directly; both see the same data and seed, so their
    /// groups must agree document for document ("same_groups"). <see cref="ServiceRounds"/> such pairs; the
    /// earlier ones are reported as round1_… fields.
    /// </summary>
    private static async Task RunThroughServiceAsync(BenchRun run, EmbeddingMatrix matrix, Dictionary<string, object?> fields, CancellationToken cancellationToken)
    {
        int n = matrix.Rows;
        int d = matrix.Dimensions;
        string[] ids = new string[n];
        string[] texts = new string[n];
        for (int i = 0; i < n; i++)
        {
            ids[i] = "r" + i.ToString(CultureInfo.InvariantCulture);
            texts[i] = string.Empty;
        }

        Proto.GroupingOptions protoOptions = ProtoOptions(run);
        long serverStart = Stopwatch.GetTimestamp();
        (Microsoft.AspNetCore.Builder.WebApplication app, Uri address) = await ServerHost.StartInProcessAsync(cancellationToken);
        fields["server_start_seconds"] = Round(Stopwatch.GetElapsedTime(serverStart).TotalSeconds);
        try
        {
            using var channel = GrpcChannel.ForAddress(address, new GrpcChannelOptions { MaxReceiveMessageSize = 256 * 1024 * 1024 });
            var client = new TopicGroupsClient(channel);

            // Warm-up through the service and in process on a small slice: compiles both paths before timing.
            long warmStart = Stopwatch.GetTimestamp();
            int warmRows = Math.Min(n, WarmUpRows);
            var warmOptions = protoOptions.Clone();
            warmOptions.GroupCount = Math.Min(run.GroupCount, warmRows);
            var warmBatch = new EmbeddingBatch(ids[..warmRows], texts[..warmRows], matrix.Values.AsMemory(0, warmRows * d), d);
            for (int call = 0; call < ServiceWarmUpCalls; call++)
            {
                await client.GroupEmbeddingsAsync(warmBatch, warmOptions, progress: null, cancellationToken);
                await Task.Delay(250, cancellationToken);
            }

            WarmUp(matrix, run, cancellationToken);
            fields["warmup_seconds"] = Round(Stopwatch.GetElapsedTime(warmStart).TotalSeconds);

            // End to end, from the matrix in memory to the answer in hand: the client packs the rows into chunks
            // (packed_embeddings) as it sends them, the server copies each chunk into its matrix, groups, and answers.
            // Then the same pipeline in process on the same matrix. The first full-size run of a process pays for
            // touching fresh memory and for code first met at this size, so the pair runs ServiceRounds times (a
            // fresh copy of the file each round, outside the timings) and the last round is the figure.
            for (int round = 1; round <= ServiceRounds; round++)
            {
                if (round > 1)
                {
                    matrix = new EmbeddingMatrix(NpyReader.ReadAll(run.EmbeddingsPath, out _, out _), n, d);
                }

                int gen2Before = GC.CollectionCount(2);
                long? faultsBefore = ProcessMemory.MinorPageFaults();
                long jitBefore = JitInfo.GetCompiledMethodCount();
                long endToEndStart = Stopwatch.GetTimestamp();
                var batch = new EmbeddingBatch(ids, texts, matrix.Values, d);
                Proto.GroupDocumentsResponse response = await client.GroupEmbeddingsAsync(batch, protoOptions, progress: null, cancellationToken);
                double endToEndSeconds = Stopwatch.GetElapsedTime(endToEndStart).TotalSeconds;

                int endToEndGen2 = GC.CollectionCount(2) - gen2Before;
                long? endToEndFaults = ProcessMemory.MinorPageFaults() - faultsBefore;
                long endToEndJit = JitInfo.GetCompiledMethodCount() - jitBefore;
                gen2Before = GC.CollectionCount(2);
                faultsBefore = ProcessMemory.MinorPageFaults();
                jitBefore = JitInfo.GetCompiledMethodCount();
                long inProcessStart = Stopwatch.GetTimestamp();
                var input = new GroupingInput(ids, texts, matrix, CoreOptions(run));
                GroupingResult result = new GroupingPipeline().Run(input, progress: null, cancellationToken);
                double inProcessSeconds = Stopwatch.GetElapsedTime(inProcessStart).TotalSeconds;
                int inProcessGen2 = GC.CollectionCount(2) - gen2Before;
                long? inProcessFaults = ProcessMemory.MinorPageFaults() - faultsBefore;
                long inProcessJit = JitInfo.GetCompiledMethodCount() - jitBefore;

                bool sameGroups = response.Documents.Count == n;
                for (int i = 0; sameGroups && i < n; i++)
                {
                    sameGroups = response.Documents[i].GroupId == result.Documents[i].GroupId;
                }

                if (round < ServiceRounds)
                {
                    fields[$"round{round}_end_to_end_seconds"] = Round(endToEndSeconds);
                    fields[$"round{round}_in_process_seconds"] = Round(inProcessSeconds);
                    fields[$"round{round}_same_groups"] = sameGroups;
                    continue;
                }

                // The pipeline normalised the matrix in place; its centroids are unit rows.
                double objective = NearestCentroid.Assign(matrix, result.Centroids, maxDegreeOfParallelism: run.Threads);
                fields["seconds"] = Round(endToEndSeconds);
                fields["seeding_seconds"] = Round(response.Statistics.SeedingSeconds);
                fields["iterations"] = response.Statistics.Iterations;
                fields["converged"] = response.Statistics.Converged;
                fields["objective"] = Math.Round(objective, 6);
                fields["fit_objective"] = Math.Round(response.Statistics.Objective, 6);
                fields["end_to_end_seconds"] = Round(endToEndSeconds);
                fields["server_seconds"] = Round(response.Statistics.Seconds);
                fields["in_process_seconds"] = Round(inProcessSeconds);
                fields["in_process_iterations"] = result.Statistics.Iterations;
                fields["end_to_end_over_in_process"] = Math.Round(endToEndSeconds / inProcessSeconds, 3);
                fields["same_groups"] = sameGroups;

                // Full collections (background ones included) that fell in each timed part: they take CPU from the grouping.
                fields["end_to_end_gen2_collections"] = endToEndGen2;
                fields["in_process_gen2_collections"] = inProcessGen2;
                fields["end_to_end_page_faults"] = endToEndFaults;
                fields["in_process_page_faults"] = inProcessFaults;

                // Methods the runtime compiled during each timed part (on a background thread, beside the work): code
                // still warming up. At 100k × 384 the second round still compiles about 100-130 on the service path and
                // 10-60 in process (tiered compilation promotes a method after 30 calls; per-request code gets there slowly).
                fields["end_to_end_jit_methods"] = endToEndJit;
                fields["in_process_jit_methods"] = inProcessJit;
            }
        }
        finally
        {
            await app.StopAsync(CancellationToken.None);
            await app.DisposeAsync();
        }
    }

    /// <summary>
    /// Two short fits with pauses between: the runtime compiles code first quickly, then (after a call count and
    /// a delay of about 100 ms, on a background thread) fully optimised; without the pauses the timed run still
    /// met partly unoptimised code (at 100k × 384, k = 100: 1.07–1.30 s against 0.97–0.99 s with tiered
    /// compilation off). Returns the seconds spent, pauses included.
    /// </summary>
    private static double WarmUp(EmbeddingMatrix matrix, BenchRun run, CancellationToken cancellationToken)
    {
        long start = Stopwatch.GetTimestamp();
        for (int round = 0; round < 2; round++)
        {
            WarmUpCore(matrix, run, cancellationToken);
            Thread.Sleep(250);
        }

        return Stopwatch.GetElapsedTime(start).TotalSeconds;
    }

    /// <summary>
    /// A short fit on a copy of the first rows (at most <see cref="WarmUpRows"/>) so the timed run does not pay
    /// for compiling the kernels; returns its seconds. The copy is small and becomes garbage at once.
    /// </summary>
    private static double WarmUpCore(EmbeddingMatrix matrix, BenchRun run, CancellationToken cancellationToken)
    {
        long start = Stopwatch.GetTimestamp();
        int rows = Math.Min(matrix.Rows, WarmUpRows);
        var slice = new EmbeddingMatrix(matrix.Values.AsSpan(0, rows * matrix.Dimensions).ToArray(), rows, matrix.Dimensions);
        RowNormalisation.NormaliseInPlace(slice);
        // As many iterations as the timed run: the late passes take the pruned path (bounds, near centroids), which
        // two iterations never reach; without it the timed run met that code unoptimised (at 20,000 × 384, k = 32:
        // 0.10–0.12 s of iterations against 0.07 s once warm).
        SphericalKMeansOptions options = ClusteringOptions(run) with
        {
            GroupCount = Math.Min(run.GroupCount, rows),
            RestartCount = 1,
            MiniBatchSize = Math.Min(run.MiniBatchSize, rows),
        };
        ClusteringResult result = SphericalKMeans.Fit(slice, options, progress: null, cancellationToken);
        NearestCentroid.Assign(slice, result.Centroids, maxDegreeOfParallelism: run.Threads);
        return Stopwatch.GetElapsedTime(start).TotalSeconds;
    }

    private static SphericalKMeansOptions ClusteringOptions(BenchRun run) => new()
    {
        GroupCount = run.GroupCount,
        Seed = run.Seed,
        RestartCount = run.RestartCount,
        MaxIterations = run.Iterations ?? SphericalKMeansDefaults.MaxIterations,
        RunAllIterations = run.Iterations is not null,
        MaxDegreeOfParallelism = run.Threads,
        MiniBatchSize = run.MiniBatchSize,
    };

    /// <summary>The Core options the service maps <see cref="ProtoOptions"/> to (the service has no "exactly I iterations" switch: I is a cap there).</summary>
    private static Core.Grouping.GroupingOptions CoreOptions(BenchRun run) => new()
    {
        GroupCount = run.GroupCount,
        Seed = run.Seed,
        RestartCount = run.RestartCount,
        MaxIterations = run.Iterations ?? SphericalKMeansDefaults.MaxIterations,
        MaxDegreeOfParallelism = run.Threads,
    };

    private static Proto.GroupingOptions ProtoOptions(BenchRun run) => new()
    {
        GroupCount = run.GroupCount,
        Seed = run.Seed,
        RestartCount = run.RestartCount,
        MaxIterations = run.Iterations ?? SphericalKMeansDefaults.MaxIterations,
    };

    private static double Round(double seconds) => Math.Round(seconds, 4);

    private static void WriteJsonLine(TextWriter output, Dictionary<string, object?> fields)
    {
        using var buffer = new MemoryStream();
        using (var writer = new Utf8JsonWriter(buffer))
        {
            writer.WriteStartObject();
            foreach ((string name, object? value) in fields)
            {
                writer.WritePropertyName(name);
                switch (value)
                {
                    case null: writer.WriteNullValue(); break;
                    case string text: writer.WriteStringValue(text); break;
                    case bool flag: writer.WriteBooleanValue(flag); break;
                    case int whole: writer.WriteNumberValue(whole); break;
                    case long whole: writer.WriteNumberValue(whole); break;
                    case ulong whole: writer.WriteNumberValue(whole); break;
                    case double real: writer.WriteNumberValue(real); break;
                    default: throw new InvalidOperationException($"no JSON form for {value.GetType().Name}");
                }
            }

            writer.WriteEndObject();
        }

        output.WriteLine(System.Text.Encoding.UTF8.GetString(buffer.ToArray()));
    }
}

/// <summary>The process's peak resident memory.</summary>
internal static class ProcessMemory
{
    /// <summary>
    /// VmHWM from /proc/self/status on Linux (the high-water mark of resident memory, whole process, loading
    /// included); elsewhere the runtime's peak working set.
    /// </summary>
    public static long PeakResidentBytes()
    {
        const string statusPath = "/proc/self/status";
        if (File.Exists(statusPath))
        {
            foreach (string line in File.ReadLines(statusPath))
            {
                if (line.StartsWith("VmHWM:", StringComparison.Ordinal))
                {
                    string[] parts = line.Split(' ', StringSplitOptions.RemoveEmptyEntries);
                    return long.Parse(parts[1], CultureInfo.InvariantCulture) * 1024;   // reported in kB
                }
            }
        }

        using Process self = Process.GetCurrentProcess();
        return self.PeakWorkingSet64;
    }

    /// <summary>
    /// Minor page faults of the whole process so far (field 10 of /proc/self/stat), or null off Linux. Each is a
    /// first touch of fresh memory; on the virtual machines measured here one costs about 12 µs (64 MiB touched
    /// page by page took 200 ms), so a run that allocates afresh pays for it in its timing.
    /// </summary>
    public static long? MinorPageFaults()
    {
        const string statPath = "/proc/self/stat";
        if (!File.Exists(statPath))
        {
            return null;
        }

        // The command name (field 2) is in parentheses and may hold spaces: count fields after the last ')'.
        string stat = File.ReadAllText(statPath);
        string[] after = stat[(stat.LastIndexOf(')') + 2)..].Split(' ');
        return long.Parse(after[7], CultureInfo.InvariantCulture);
    }
}
