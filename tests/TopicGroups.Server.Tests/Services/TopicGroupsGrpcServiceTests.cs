using System.Diagnostics;
using System.Diagnostics.Metrics;
using Grpc.Core;
using Grpc.Health.V1;
using Grpc.Net.Client;
using Grpc.Reflection.V1Alpha;
using Microsoft.Extensions.DependencyInjection;
using TopicGroups.Protos.V1;
using Xunit;
using Xunit.Abstractions;

namespace TopicGroups.Server.Tests.Services;

/// <summary>Groupings through the real gRPC path, on invented batches with known themes.</summary>
public sealed class TopicGroupsGrpcServiceTests(TestHost host, ITestOutputHelper output) : IClassFixture<TestHost>
{
    private const int Seed = 20261201;

    private static GroupDocumentsRequest Request(IEnumerable<Document> documents, GroupingOptions options)
    {
        var request = new GroupDocumentsRequest { Options = options };
        request.Documents.AddRange(documents);
        return request;
    }

    /// <summary>What a user checks on a batch whose themes are known: every theme is one group, nothing mixed.</summary>
    private static void AssertRecoversThemes(GroupDocumentsResponse response, List<Document> documents, int[] themes, int groupCount)
    {
        int n = documents.Count;
        Assert.Equal(groupCount, response.Groups.Count);
        Assert.Equal(Enumerable.Range(1, groupCount), response.Groups.Select(g => g.Id));
        Assert.All(response.Groups, g => Assert.Equal(n / groupCount, g.Size));

        // Placements come back in sending order, and each theme maps to exactly one group.
        Assert.Equal(documents.Select(d => d.Id), response.Documents.Select(p => p.DocumentId));
        var groupOfTheme = new Dictionary<int, int>();
        for (int i = 0; i < n; i++)
        {
            int group = response.Documents[i].GroupId;
            Assert.Equal(groupOfTheme.GetValueOrDefault(themes[i], group), group);
            groupOfTheme[themes[i]] = group;
        }

        Assert.Equal(groupCount, groupOfTheme.Values.Distinct().Count());

        foreach (DocumentPlacement placement in response.Documents)
        {
            Assert.InRange(placement.Similarity, 0.8f, 1.0001f);       // noise 0.05 in 32 dims: cos ≈ 0.96
            Assert.True(placement.Margin > 0.5f, $"{placement.DocumentId}: margin {placement.Margin}");
            Assert.NotEqual(placement.GroupId, placement.RunnerUpGroupId);
            Assert.InRange(placement.RunnerUpGroupId, 1, groupCount);
        }

        foreach (Group group in response.Groups)
        {
            var members = response.Documents.Where(p => p.GroupId == group.Id).ToList();
            Assert.Equal(members.Count(m => m.IsOutlier), group.OutlierCount);
            Assert.Equal(members.Average(m => (double)m.Similarity), group.Cohesion, 1e-5);

            // Examples are members, nearest the centre first.
            Assert.All(group.Examples, e => Assert.Contains(members, m => m.DocumentId == e.DocumentId));
            Assert.Equal(group.Examples.OrderByDescending(e => e.Similarity).Select(e => e.DocumentId), group.Examples.Select(e => e.DocumentId));
            Assert.All(group.Examples, e => Assert.Equal(documents.Single(d => d.Id == e.DocumentId).Text, e.Text));

            // The heaviest term is one of the theme's own words.
            int theme = themes[documents.FindIndex(d => d.Id == members[0].DocumentId)];
            Assert.NotEmpty(group.Terms);
            Assert.Contains(group.Terms[0].Term, TestBatches.ThemeWords[theme]);
        }
    }

    [Fact]
    public async Task GroupDocuments_WellSeparatedThemes_OneGroupPerThemeWithStatistics()
    {
        var (documents, themes) = TestBatches.WellSeparated(groupCount: 4, perTheme: 25, dimensions: 32, seed: Seed);
        var options = new GroupingOptions { GroupCount = 4, Seed = 7, RestartCount = 3, ExampleCount = 2, TermCount = 5 };

        GroupDocumentsResponse response = await host.Client.GroupDocumentsAsync(Request(documents, options));

        AssertRecoversThemes(response, documents, themes, groupCount: 4);
        Assert.All(response.Groups, g => Assert.Equal(2, g.Examples.Count));
        Assert.All(response.Groups, g => Assert.InRange(g.Terms.Count, 1, 5));
        RunStatistics statistics = response.Statistics;
        Assert.Equal(100, statistics.DocumentCount);
        Assert.Equal(32, statistics.Dimensions);
        Assert.Equal(3, statistics.RestartCount);
        Assert.InRange(statistics.Objective, 0.9, 1.0);
        Assert.Equal(response.Documents.Average(p => (double)p.Similarity), statistics.Objective, 1e-4);
        Assert.InRange(statistics.Iterations, 1, 50);
        Assert.True(statistics.Converged);
        Assert.True(statistics.Seconds > 0 && statistics.Seconds >= statistics.SeedingSeconds);
    }

    [Fact]
    public async Task GroupDocuments_ZeroOptions_ServerDefaultsApplied()
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 3, perTheme: 10, dimensions: 16, seed: Seed);

        GroupDocumentsResponse response = await host.Client.GroupDocumentsAsync(
            Request(documents, new GroupingOptions { GroupCount = 3 }));

        Assert.Equal(4, response.Statistics.RestartCount);            // Core default RestartCount
        Assert.All(response.Groups, g => Assert.Equal(3, g.Examples.Count)); // Core default ExampleCount
        Assert.All(response.Groups, g => Assert.InRange(g.Terms.Count, 1, 8)); // Core default TermCount
    }

    [Fact]
    public async Task GroupDocuments_SameSeedTwice_IdenticalPlacements()
    {
        List<Document> documents = TestBatches.Random(count: 300, dimensions: 24, seed: Seed);
        var options = new GroupingOptions { GroupCount = 6, Seed = 11 };

        GroupDocumentsResponse first = await host.Client.GroupDocumentsAsync(Request(documents, options));
        GroupDocumentsResponse second = await host.Client.GroupDocumentsAsync(Request(documents, options));

        Assert.Equal(first.Documents, second.Documents);
        Assert.Equal(first.Statistics.Objective, second.Statistics.Objective);
    }

    [Fact]
    public async Task StreamGroupDocuments_ThreeChunks_ProgressThenSameResultAsUnary()
    {
        var (documents, themes) = TestBatches.WellSeparated(groupCount: 5, perTheme: 12, dimensions: 32, seed: Seed + 1);
        var options = new GroupingOptions { GroupCount = 5, Seed = 3 };

        var progress = new List<GroupingProgress>();
        GroupDocumentsResponse? streamed = null;
        using (var call = host.Client.StreamGroupDocuments())
        {
            for (int chunk = 0; chunk < 3; chunk++)
            {
                var request = new StreamGroupDocumentsRequest { ChunkIndex = chunk, Options = chunk == 0 ? options : null };
                request.Documents.AddRange(documents.Skip(chunk * 20).Take(20));
                await call.RequestStream.WriteAsync(request);
            }

            await call.RequestStream.CompleteAsync();
            await foreach (StreamGroupDocumentsResponse response in call.ResponseStream.ReadAllAsync())
            {
                Assert.Null(streamed); // the result is the last message
                if (response.EventCase == StreamGroupDocumentsResponse.EventOneofCase.Progress)
                {
                    progress.Add(response.Progress);
                }
                else
                {
                    streamed = response.Result;
                }
            }
        }

        Assert.NotNull(streamed);
        AssertRecoversThemes(streamed, documents, themes, groupCount: 5);

        // Receiving events count documents: chunk 0's at once, the whole batch's last (one in between only if 100 ms
        // passed); then the computation's stages in order.
        int[] received = [.. progress.Where(p => p.Stage == GroupingStage.Receiving).Select(p => p.DocumentsReceived)];
        Assert.Equal(20, received[0]);
        Assert.Equal(60, received[^1]);
        Assert.Subset(new HashSet<int> { 20, 40, 60 }, received.ToHashSet());
        Assert.Equal(received.Distinct().Order(), received);   // rising, none twice
        var stages = progress.Select(p => p.Stage).ToList();
        Assert.Contains(GroupingStage.Refining, stages);
        Assert.Equal(GroupingStage.Describing, stages[^1]);
        Assert.True(stages.IndexOf(GroupingStage.Seeding) > stages.LastIndexOf(GroupingStage.Receiving));

        GroupDocumentsResponse unary = await host.Client.GroupDocumentsAsync(Request(documents, options));
        Assert.Equal(unary.Documents, streamed.Documents);
        Assert.Equal(unary.Groups.Select(g => g.Size), streamed.Groups.Select(g => g.Size));
        Assert.Equal(unary.Statistics.Objective, streamed.Statistics.Objective);
    }

    [Fact]
    public async Task GroupDocuments_DeadlineShorterThanRun_DeadlineExceededAndServerStopsComputing()
    {
        // A real loopback HTTP/2 server (as the CLI starts), not TestServer: deadline handling involves the
        // transport (the server resets the stream), which only a real socket shows faithfully.
        var (app, address) = await ServerHost.StartInProcessAsync();
        await using var _ = app;
        using var channel = GrpcChannel.ForAddress(address);
        var client = new TopicGroupsService.TopicGroupsServiceClient(channel);

        // 6,000 unstructured 128-d rows into 300 groups with 64 restarts: tens of seconds of work here.
        List<Document> documents = TestBatches.Random(count: 6000, dimensions: 128, seed: Seed);
        var options = new GroupingOptions { GroupCount = 300, RestartCount = 64, MaxIterations = 1000 };
        using var activeRuns = new ActiveRunsProbe(app.Services);

        var stopwatch = Stopwatch.StartNew();
        RpcException error = await Assert.ThrowsAsync<RpcException>(async () =>
            await client.GroupDocumentsAsync(Request(documents, options), deadline: DateTime.UtcNow.AddSeconds(1.5)));
        TimeSpan answered = stopwatch.Elapsed;

        // The pipeline checks the token between iterations, so the CPU work ends soon after the deadline.
        bool stopped = await activeRuns.WaitUntilIdleAsync(TimeSpan.FromSeconds(10));
        output.WriteLine($"{error.StatusCode} after {answered.TotalSeconds:F2} s; run stopped after {stopwatch.Elapsed.TotalSeconds:F2} s");
        Assert.True(activeRuns.Started, "the run never started: the deadline was too short to test anything");
        Assert.True(
            error.StatusCode is StatusCode.DeadlineExceeded or StatusCode.Cancelled,
            $"{error.StatusCode}: {error.Status.Detail} {error.Status.DebugException}");
        Assert.True(answered < TimeSpan.FromSeconds(5), $"answered after {answered}");
        Assert.True(stopped, "the server was still computing 10 s after the deadline");
        await app.StopAsync();
    }

    [Fact]
    public async Task HealthCheck_RunningServer_Serving()
    {
        var health = new Health.HealthClient(host.Channel);

        HealthCheckResponse response = await health.CheckAsync(new HealthCheckRequest());

        Assert.Equal(HealthCheckResponse.Types.ServingStatus.Serving, response.Status);
    }

    [Fact]
    public async Task Reflection_ListServices_IncludesGroupingAndHealth()
    {
        var reflection = new ServerReflection.ServerReflectionClient(host.Channel);
        using var call = reflection.ServerReflectionInfo();

        await call.RequestStream.WriteAsync(new ServerReflectionRequest { ListServices = "" });
        await call.RequestStream.CompleteAsync();
        Assert.True(await call.ResponseStream.MoveNext(CancellationToken.None));

        var names = call.ResponseStream.Current.ListServicesResponse.Service.Select(s => s.Name).ToList();
        Assert.Contains("topicgroups.v1.TopicGroupsService", names);
        Assert.Contains("grpc.health.v1.Health", names);
    }

    /// <summary>Follows the server's active-runs counter (a metric) of this test host only.</summary>
    private sealed class ActiveRunsProbe : IDisposable
    {
        private readonly MeterListener _listener = new();
        private int _active;
        private int _started;

        public ActiveRunsProbe(IServiceProvider services)
        {
            IMeterFactory meterFactory = services.GetRequiredService<IMeterFactory>();
            _listener.InstrumentPublished = (instrument, listener) =>
            {
                if (instrument.Meter.Scope == meterFactory && instrument.Name == "topicgroups.grouping.active_runs")
                {
                    listener.EnableMeasurementEvents(instrument);
                }
            };
            _listener.SetMeasurementEventCallback<int>((_, delta, _, _) =>
            {
                Interlocked.Add(ref _active, delta);
                if (delta > 0)
                {
                    Interlocked.Exchange(ref _started, 1);
                }
            });
            _listener.Start();
        }

        public bool Started => Volatile.Read(ref _started) == 1;

        public async Task<bool> WaitUntilIdleAsync(TimeSpan timeout)
        {
            var stopwatch = Stopwatch.StartNew();
            while (Volatile.Read(ref _active) > 0)
            {
                if (stopwatch.Elapsed > timeout)
                {
                    return false;
                }

                await Task.Delay(50);
            }

            return true;
        }

        public void Dispose() => _listener.Dispose();
    }
}
