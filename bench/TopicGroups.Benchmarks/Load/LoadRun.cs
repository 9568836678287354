using System.Collections.Concurrent;
using System.Diagnostics;
using System.Globalization;
using System.Text;
using Grpc.Core;
using Grpc.Net.Client;
using TopicGroups.Client;
using TopicGroups.Protos.V1;

namespace TopicGroups.Benchmarks.Load;

/// <summary>What a load run does. Every call groups and saves a batch of invented, clearly grouped documents.</summary>
public sealed record LoadSettings
{
    /// <summary>Concurrent clients, each with its own channel (its own HTTP/2 connection), calling back to back.</summary>
    public int Clients { get; init; } = 8;

    /// <summary>How long clients start new calls; calls running at the end are awaited.</summary>
    public TimeSpan Duration { get; init; } = TimeSpan.FromSeconds(60);

    public int DocumentsPerCall { get; init; } = 400;

    public int Dimensions { get; init; } = 64;

    public int GroupCount { get; init; } = 8;

    /// <summary>When set, the server is killed (SIGKILL) this long after the start, and started again on the same store.</summary>
    public TimeSpan? KillAfter { get; init; }

    /// <summary>How long the server stays down before it is started again.</summary>
    public TimeSpan DownTime { get; init; } = TimeSpan.FromSeconds(1);

    /// <summary>The client's retry settings: enough budget to outlast the restart.</summary>
    public TopicGroupsClientOptions ClientOptions { get; init; } = new()
    {
        Timeout = TimeSpan.FromSeconds(60),
        MaxRetryAttempts = 12,
        RetryDelay = TimeSpan.FromMilliseconds(200),
        RetryBudget = TimeSpan.FromSeconds(45),
    };
}

/// <summary>The figures of one load run, and the checks on the saved groupings afterwards.</summary>
public sealed record LoadReport(
    LoadSettings Settings,
    TimeSpan Elapsed,
    int CallsDone,
    IReadOnlyDictionary<string, int> ErrorsByStatus,
    int Attempts,
    double P50Milliseconds,
    double P99Milliseconds,
    double MaxMilliseconds,
    long ServerPeakMemoryBytes,
    int ServerStarts,
    TimeSpan? DownTimeSeen,
    int StoredGroupings,
    int RepliesWithMissingGrouping,
    int RepliesWithWrongGrouping)
{
    public int Errors => ErrorsByStatus.Values.Sum();

    /// <summary>Saved groupings no successful call accounts for: what a duplicate save would leave behind.</summary>
    public int UnaccountedGroupings => StoredGroupings - CallsDone;

    public string ToText()
    {
        var text = new StringBuilder();
        var culture = CultureInfo.InvariantCulture;
        text.AppendLine(culture, $"clients {Settings.Clients}, {Settings.Duration.TotalSeconds:0} s, {Settings.DocumentsPerCall} documents x {Settings.Dimensions} dims into {Settings.GroupCount} groups per call, every call saved");
        text.AppendLine(culture, $"calls done       {CallsDone} ({CallsDone / Elapsed.TotalSeconds:0.0} per second over {Elapsed.TotalSeconds:0.0} s)");
        text.AppendLine(culture, $"errors           {(Errors == 0 ? "none" : string.Join(", ", ErrorsByStatus.Select(e => $"{e.Key} {e.Value}")))}");
        text.AppendLine(culture, $"attempts         {Attempts} ({Attempts - CallsDone - Errors} retries)");
        text.AppendLine(culture, $"latency          p50 {P50Milliseconds:0} ms, p99 {P99Milliseconds:0} ms, max {MaxMilliseconds:0} ms (whole call, retries included)");
        text.AppendLine(culture, $"server peak RSS  {ServerPeakMemoryBytes / (1024.0 * 1024):0} MiB");
        if (Settings.KillAfter is TimeSpan killAfter)
        {
            text.AppendLine(culture, $"fault            killed (SIGKILL) at {killAfter.TotalSeconds:0.0} s, serving again after {DownTimeSeen?.TotalSeconds:0.0} s; {ServerStarts} server starts");
        }

        text.AppendLine(culture, $"saved groupings  {StoredGroupings} stored for {CallsDone} successful calls; {RepliesWithMissingGrouping} replies name a missing grouping, {RepliesWithWrongGrouping} a wrong one, {UnaccountedGroupings} unaccounted (duplicates)");
        return text.ToString();
    }
}

/// <summary>
/// Runs N clients against a real server process on 127.0.0.1 for a fixed time, optionally killing and restarting the
/// server mid-run, then checks every saved grouping against the replies that named it.
/// </summary>
public static class LoadRun
{
    public static async Task<LoadReport> RunAsync(LoadSettings settings, string serverExecutable, string folder, TextWriter? log = null)
    {
        string sqlitePath = Path.Combine(folder, "load-groupings.db");
        int port = ServerProcess.FreePort();
        var server = ServerProcess.Start(serverExecutable, port, sqlitePath);
        int starts = 1;
        long peak = 0;
        TimeSpan? downTime = null;
        try
        {
            await server.WaitUntilServingAsync(TimeSpan.FromSeconds(60));
            log?.WriteLine($"server pid {server.ProcessId} serving on {server.Address}");

            var outcomes = new ConcurrentBag<CallOutcome>();
            var attempts = new AttemptCounter();
            var clock = Stopwatch.StartNew();
            Task[] clients = Enumerable.Range(0, settings.Clients)
                .Select(c => ClientLoopAsync(c, settings, server.Address, clock, outcomes, attempts))
                .ToArray();

            if (settings.KillAfter is TimeSpan killAfter)
            {
                await Task.Delay(killAfter);

                // Kill while a grouping is under way (up to 2 s more), so that the fault interrupts calls and not
                // only the gap between them: short calls otherwise left it to chance (once, none in 481 calls).
                var aiming = Stopwatch.StartNew();
                while (attempts.Waiting == 0 && aiming.Elapsed < TimeSpan.FromSeconds(2))
                {
                    await Task.Delay(1);
                }

                peak = Math.Max(peak, server.PeakMemoryBytes());
                server.Kill();
                var down = Stopwatch.StartNew();
                log?.WriteLine($"killed server pid {server.ProcessId} at {clock.Elapsed.TotalSeconds:0.0} s");
                server.Dispose();
                await Task.Delay(settings.DownTime);
                server = ServerProcess.Start(serverExecutable, port, sqlitePath);
                starts++;
                await server.WaitUntilServingAsync(TimeSpan.FromSeconds(60));
                downTime = down.Elapsed;
                log?.WriteLine($"server pid {server.ProcessId} serving again at {clock.Elapsed.TotalSeconds:0.0} s");
            }

            await Task.WhenAll(clients);
            TimeSpan elapsed = clock.Elapsed;
            peak = Math.Max(peak, server.PeakMemoryBytes());

            var done = outcomes.Where(o => o.Status is null).ToList();
            var errors = outcomes.Where(o => o.Status is not null)
                .GroupBy(o => o.Status!)
                .OrderBy(g => g.Key, StringComparer.Ordinal)
                .ToDictionary(g => g.Key, g => g.Count());
            double[] latencies = done.Select(o => o.Milliseconds).Order().ToArray();
            var (stored, missing, wrong) = await CheckSavedAsync(server.Address, done, settings);
            return new LoadReport(
                settings,
                elapsed,
                done.Count,
                errors,
                attempts.Count,
                Percentile(latencies, 0.50),
                Percentile(latencies, 0.99),
                latencies.Length == 0 ? 0 : latencies[^1],
                peak,
                starts,
                downTime,
                stored,
                missing,
                wrong);
        }
        finally
        {
            server.Dispose();
        }
    }

    /// <summary>Nearest-rank percentile of sorted values.</summary>
    public static double Percentile(double[] sorted, double fraction)
    {
        if (sorted.Length == 0)
        {
            return 0;
        }

        int rank = (int)Math.Ceiling(fraction * sorted.Length);
        return sorted[Math.Clamp(rank - 1, 0, sorted.Length - 1)];
    }

    private static async Task ClientLoopAsync(
        int clientIndex, LoadSettings settings, Uri address, Stopwatch clock, ConcurrentBag<CallOutcome> outcomes, AttemptCounter attempts)
    {
        await Task.Yield();
        using var channel = GrpcChannel.ForAddress(address, new GrpcChannelOptions
        {
            HttpHandler = new CountingHandler(attempts) { InnerHandler = new SocketsHttpHandler { ConnectTimeout = TimeSpan.FromSeconds(5) } },
            MaxReceiveMessageSize = settings.ClientOptions.MaxResponseBytes,
        });
        var client = new TopicGroupsClient(channel, settings.ClientOptions);
        List<Document> documents = Batch(settings, seed: 1000 + clientIndex);
        var options = new GroupingOptions { GroupCount = settings.GroupCount, Seed = (ulong)clientIndex, Save = true };
        while (clock.Elapsed < settings.Duration)
        {
            var call = Stopwatch.StartNew();
            try
            {
                GroupDocumentsResponse response = await client.GroupDocumentsAsync(documents, options);
                outcomes.Add(new CallOutcome(null, call.Elapsed.TotalMilliseconds, response.SavedGroupingName, response.Groups.Count));
            }
            catch (RpcException exception)
            {
                outcomes.Add(new CallOutcome(exception.StatusCode.ToString(), call.Elapsed.TotalMilliseconds, null, 0));
            }
        }
    }

    /// <summary>
    /// Every successful reply's grouping must be stored with that reply's group and document counts, and no grouping
    /// may be stored that no reply names (a duplicate save).
    /// </summary>
    private static async Task<(int Stored, int Missing, int Wrong)> CheckSavedAsync(Uri address, List<CallOutcome> done, LoadSettings settings)
    {
        using var channel = GrpcChannel.ForAddress(address);
        var client = new TopicGroupsClient(channel, settings.ClientOptions);
        var stored = new Dictionary<string, Grouping>(StringComparer.Ordinal);
        await foreach (Grouping grouping in client.ListGroupingsAsync(pageSize: 1000))
        {
            stored[grouping.Name] = grouping;
        }

        int missing = 0, wrong = 0;
        foreach (CallOutcome outcome in done)
        {
            if (!stored.TryGetValue(outcome.SavedName!, out Grouping? grouping))
            {
                missing++;
            }
            else if (grouping.GroupCount != outcome.GroupCount || grouping.DocumentCount != settings.DocumentsPerCall)
            {
                wrong++;
            }
        }

        return (stored.Count, missing, wrong);
    }

    /// <summary>Invented documents: GroupCount themes on their own axes plus seeded noise, with matching words.</summary>
    private static List<Document> Batch(LoadSettings settings, int seed)
    {
        string[] themeWords = ["harbour", "timetable", "refund", "cabin", "vehicle", "kennel", "wifi", "luggage", "catering", "parking", "accessibility", "weather"];
        var random = new Random(seed);
        var documents = new List<Document>(settings.DocumentsPerCall);
        for (int i = 0; i < settings.DocumentsPerCall; i++)
        {
            int theme = i % settings.GroupCount;
            var document = new Document
            {
                Id = $"load-{seed}-{i}",
                Text = $"{themeWords[theme % themeWords.Length]} question about the {themeWords[(theme + 3) % themeWords.Length]} please",
            };
            var embedding = new float[settings.Dimensions];
            for (int j = 0; j < embedding.Length; j++)
            {
                embedding[j] = (float)(0.1 * (random.NextDouble() - 0.5));
            }

            embedding[theme % settings.Dimensions] += 1f;
            document.Embedding.Add(embedding);
            documents.Add(document);
        }

        return documents;
    }

    private sealed record CallOutcome(string? Status, double Milliseconds, string? SavedName, int GroupCount);

    private sealed class AttemptCounter
    {
        private int _count;
        private int _waiting;

        public int Count => Volatile.Read(ref _count);

        /// <summary>Attempts sent whose response has not begun: a kill now interrupts them.</summary>
        public int Waiting => Volatile.Read(ref _waiting);

        public void Add() => Interlocked.Increment(ref _count);

        public void Began() => Interlocked.Increment(ref _waiting);

        public void Answered() => Interlocked.Decrement(ref _waiting);
    }

    /// <summary>Counts every grouping attempt that leaves the client, retries included, and those still waiting for their response.</summary>
    private sealed class CountingHandler(AttemptCounter counter) : DelegatingHandler
    {
        protected override async Task<HttpResponseMessage> SendAsync(HttpRequestMessage request, CancellationToken cancellationToken)
        {
            if (!request.RequestUri!.AbsolutePath.EndsWith("GroupDocuments", StringComparison.Ordinal))
            {
                return await base.SendAsync(request, cancellationToken);
            }

            counter.Add();
            counter.Began();
            try
            {
                return await base.SendAsync(request, cancellationToken);
            }
            finally
            {
                counter.Answered();
            }
        }
    }
}
