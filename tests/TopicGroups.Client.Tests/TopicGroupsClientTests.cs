using System.Diagnostics;
using Grpc.Core;
using Grpc.Net.Client;
using Microsoft.Extensions.DependencyInjection;
using TopicGroups.Protos.V1;
using TopicGroups.Server.Tests;
using Xunit;

namespace TopicGroups.Client.Tests;

/// <summary>The client against the real server in memory, with a recording handler in between.</summary>
public sealed class TopicGroupsClientTests(TestHost host) : IClassFixture<TestHost>, IDisposable
{
    private const int Seed = 4242;
    private readonly List<IDisposable> _disposables = [];

    public void Dispose() => _disposables.ForEach(d => d.Dispose());

    private (TopicGroupsClient Client, RecordingHandler Handler) Connect(TopicGroupsClientOptions? options = null)
    {
        var handler = new RecordingHandler(host.Factory.Server.CreateHandler());
        var channel = GrpcChannel.ForAddress(host.Factory.Server.BaseAddress, new GrpcChannelOptions
        {
            HttpHandler = handler,
            MaxReceiveMessageSize = new TopicGroupsClientOptions().MaxResponseBytes,
        });
        _disposables.Add(channel);
        return (new TopicGroupsClient(channel, options), handler);
    }

    private static TopicGroupsClientOptions FastRetries(int maxRetryAttempts = 3) => new()
    {
        MaxRetryAttempts = maxRetryAttempts,
        RetryDelay = TimeSpan.FromMilliseconds(5),
    };

    [Fact]
    public async Task GroupDocumentsAsync_BatchOverOneMegabyte_StreamedInChunksWithSameResultAsUnary()
    {
        // 5 themes x 240 documents x 256 floats: about 1.3 MB encoded, so the default threshold (1 MiB) streams it.
        var (documents, themes) = TestBatches.WellSeparated(groupCount: 5, perTheme: 240, dimensions: 256, seed: Seed, noise: 0.03);
        var options = new GroupingOptions { GroupCount = 5, Seed = 9 };
        var (streaming, streamingCalls) = Connect();
        var (unary, unaryCalls) = Connect(new TopicGroupsClientOptions { StreamingThresholdBytes = 16 * 1024 * 1024 });

        GroupDocumentsResponse streamed = await streaming.GroupDocumentsAsync(documents, options);
        GroupDocumentsResponse single = await unary.GroupDocumentsAsync(documents, options);

        Assert.Equal(["StreamGroupDocuments"], streamingCalls.Methods);
        Assert.Equal(["GroupDocuments"], unaryCalls.Methods);
        Assert.Equal(single.Documents, streamed.Documents);
        Assert.Equal(single.Groups, streamed.Groups);   // ids, sizes, cohesion, terms, examples
        Assert.Equal(single.Statistics.Objective, streamed.Statistics.Objective);

        // And the result is right: each theme is one group of 240.
        Assert.All(streamed.Groups, g => Assert.Equal(240, g.Size));
        for (int i = 0; i < documents.Count; i++)
        {
            int firstOfTheme = Array.IndexOf(themes, themes[i]);
            Assert.Equal(streamed.Documents[firstOfTheme].GroupId, streamed.Documents[i].GroupId);
        }
    }

    [Fact]
    public async Task GroupDocumentsAsync_ProgressAsked_StreamsReceivingCountsThenStagesInOrder()
    {
        // Chunk sizes are checked where the chunks are recorded (PackedEmbeddingsClientTests).
        var (documents, _) = TestBatches.WellSeparated(groupCount: 4, perTheme: 100, dimensions: 128, seed: Seed);
        var (client, calls) = Connect(new TopicGroupsClientOptions { ChunkSizeBytes = 64 * 1024 });
        var progress = new RecordingProgress<GroupingProgress>();

        GroupDocumentsResponse response = await client.GroupDocumentsAsync(documents, new GroupingOptions { GroupCount = 4 }, progress);

        Assert.Equal(400, response.Documents.Count);
        Assert.Equal(["StreamGroupDocuments"], calls.Methods);
        int[] received = progress.Reports.Where(p => p.Stage == GroupingStage.Receiving).Select(p => p.DocumentsReceived).ToArray();
        Assert.InRange(received[0], 1, 399);     // chunk 0's count comes at once: the batch is several chunks
        Assert.Equal(400, received[^1]);         // and the whole batch's count after the last
        Assert.Equal(received.Distinct().Order(), received);   // rising, none twice

        var stages = progress.Reports.Select(p => p.Stage).ToList();
        Assert.True(stages.LastIndexOf(GroupingStage.Receiving) < stages.IndexOf(GroupingStage.Seeding), string.Join(", ", stages));
        Assert.Contains(GroupingStage.Refining, stages);
        Assert.Equal(GroupingStage.Describing, stages[^1]);
    }

    [Fact]
    public async Task GroupDocumentsAsync_SmallBatchWithoutProgress_OneUnaryCall()
    {
        var (client, calls) = Connect();

        GroupDocumentsResponse response = await client.GroupDocumentsAsync(TestBatches.Valid(8), new GroupingOptions { GroupCount = 2 });

        Assert.Equal(8, response.Documents.Count);
        Assert.Equal(["GroupDocuments"], calls.Methods);
    }

    [Fact]
    public async Task GroupDocumentsAsync_FirstTwoAttemptsUnavailable_RetriedAndSucceeds()
    {
        var (client, calls) = Connect(FastRetries());
        calls.FailNext(2);

        GroupDocumentsResponse response = await client.GroupDocumentsAsync(TestBatches.Valid(8), new GroupingOptions { GroupCount = 2 });

        Assert.Equal(8, response.Documents.Count);
        Assert.Equal(3, calls.Methods.Count);
    }

    [Fact]
    public async Task GroupDocumentsAsync_StreamedAttemptUnavailable_WholeBatchResentAndSucceeds()
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 3, perTheme: 50, dimensions: 64, seed: Seed);
        var options = FastRetries();
        options.StreamingThresholdBytes = 0;      // always stream
        options.ChunkSizeBytes = 16 * 1024;       // several chunks
        var (client, calls) = Connect(options);
        calls.FailNext(1);
        var progress = new RecordingProgress<GroupingProgress>();

        GroupDocumentsResponse response = await client.GroupDocumentsAsync(documents, new GroupingOptions { GroupCount = 3 }, progress);

        Assert.Equal(documents.Select(d => d.Id), response.Documents.Select(p => p.DocumentId));
        Assert.Equal(["StreamGroupDocuments", "StreamGroupDocuments"], calls.Methods);
        Assert.Equal(150, progress.Reports.Where(p => p.Stage == GroupingStage.Receiving).Max(p => p.DocumentsReceived));
    }

    [Fact]
    public async Task GroupDocumentsAsync_AlwaysUnavailable_GivesUpAfterMaxRetries()
    {
        var (client, calls) = Connect(FastRetries(maxRetryAttempts: 2));
        calls.FailNext(100);

        RpcException error = await RpcAssert.FailsAsync(
            StatusCode.Unavailable,
            () => client.GroupDocumentsAsync(TestBatches.Valid(8), new GroupingOptions { GroupCount = 2 }));

        Assert.Equal(3, calls.Methods.Count);
        Assert.Contains("connection refused", error.Status.DebugException?.Message ?? error.Status.Detail);
    }

    [Fact]
    public async Task GroupDocumentsAsync_NothingListening_UnavailableAfterRetries()
    {
        // A real refused connection (not a simulated one): a port that was free a moment ago.
        var listener = new System.Net.Sockets.TcpListener(System.Net.IPAddress.Loopback, 0);
        listener.Start();
        int port = ((System.Net.IPEndPoint)listener.LocalEndpoint).Port;
        listener.Stop();
        using var channel = GrpcChannel.ForAddress($"http://127.0.0.1:{port}");
        var client = new TopicGroupsClient(channel, FastRetries(maxRetryAttempts: 2));
        var stopwatch = Stopwatch.StartNew();

        await RpcAssert.FailsAsync(
            StatusCode.Unavailable,
            () => client.GroupDocumentsAsync(TestBatches.Valid(4), new GroupingOptions { GroupCount = 1 }));

        Assert.True(stopwatch.Elapsed < TimeSpan.FromSeconds(10), $"took {stopwatch.Elapsed}");
    }

    [Fact]
    public async Task GroupDocumentsAsync_InvalidArgument_NotRetriedAndFieldViolationsReadable()
    {
        var (client, calls) = Connect(FastRetries());
        var documents = TestBatches.Valid(8);
        documents[5].Id = documents[2].Id;

        RpcException error = await RpcAssert.FailsAsync(
            StatusCode.InvalidArgument,
            () => client.GroupDocumentsAsync(documents, new GroupingOptions { GroupCount = 2 }));

        Assert.Single(calls.Methods);
        Assert.Contains("documents[2]", RpcAssert.Single(error, "documents[5].id").Description);
    }

    [Fact]
    public async Task GroupDocumentsAsync_StreamedBatchBadInLaterChunk_ServerStatusSurfaces()
    {
        var documents = TestBatches.Valid(2000, d: 160);   // about 1.3 MB: streamed
        documents[1500] = TestBatches.Make("odd-one", 1f, 2f, 3f);
        var (client, calls) = Connect(FastRetries());

        RpcException error = await RpcAssert.FailsAsync(
            StatusCode.InvalidArgument,
            () => client.GroupDocumentsAsync(documents, new GroupingOptions { GroupCount = 2 }));

        Assert.Equal(["StreamGroupDocuments"], calls.Methods);
        Assert.Contains("has 3 values", RpcAssert.Single(error, "documents[1500].embedding").Description);
    }

    [Fact]
    public async Task GroupDocumentsAsync_DefaultTimeout_SentAsTenMinuteDeadline()
    {
        var (client, calls) = Connect();

        await client.GroupDocumentsAsync(TestBatches.Valid(4), new GroupingOptions { GroupCount = 1 });

        TimeSpan sent = ParseGrpcTimeout(Assert.Single(calls.Timeouts));
        Assert.InRange(sent, TimeSpan.FromMinutes(9.9), TimeSpan.FromMinutes(10));
    }

    [Fact]
    public async Task GroupDocumentsAsync_TimeoutShorterThanRun_DeadlineExceededPromptlyWithoutRetry()
    {
        List<Document> documents = TestBatches.Random(count: 6000, dimensions: 128, seed: Seed);
        var options = FastRetries();
        options.Timeout = TimeSpan.FromSeconds(1.5);
        var (client, calls) = Connect(options);
        var stopwatch = Stopwatch.StartNew();

        await RpcAssert.FailsAsync(
            StatusCode.DeadlineExceeded,
            () => client.GroupDocumentsAsync(documents, new GroupingOptions { GroupCount = 300, RestartCount = 64, MaxIterations = 1000 }));

        Assert.True(stopwatch.Elapsed < TimeSpan.FromSeconds(5), $"took {stopwatch.Elapsed}");
        Assert.Single(calls.Methods);
    }

    [Fact]
    public async Task GroupDocumentsAsync_CallerCancels_CancelledWithoutRetry()
    {
        List<Document> documents = TestBatches.Random(count: 3000, dimensions: 64, seed: Seed);
        var (client, calls) = Connect(FastRetries());
        using var cancellation = new CancellationTokenSource(TimeSpan.FromMilliseconds(800));

        await RpcAssert.FailsAsync(
            StatusCode.Cancelled,
            () => client.GroupDocumentsAsync(documents, new GroupingOptions { GroupCount = 200, RestartCount = 64 }, cancellationToken: cancellation.Token));

        Assert.Single(calls.Methods);
    }

    [Fact]
    public async Task CheckHealthAsync_RunningServer_True()
    {
        var (client, _) = Connect();

        Assert.True(await client.CheckHealthAsync());
    }

    [Fact]
    public async Task AddTopicGroupsClient_ResolvedClient_GroupsWithConfiguredTimeout()
    {
        var services = new ServiceCollection();
        RecordingHandler? handler = null;
        services.AddTopicGroupsClient(options =>
            {
                options.Address = host.Factory.Server.BaseAddress;
                options.Timeout = TimeSpan.FromSeconds(42);
            })
            .ConfigurePrimaryHttpMessageHandler(() => handler = new RecordingHandler(host.Factory.Server.CreateHandler()));
        using ServiceProvider provider = services.BuildServiceProvider();

        var client = provider.GetRequiredService<TopicGroupsClient>();
        GroupDocumentsResponse response = await client.GroupDocumentsAsync(TestBatches.Valid(6), new GroupingOptions { GroupCount = 2 });

        Assert.Equal(6, response.Documents.Count);
        Assert.True(await client.CheckHealthAsync());
        Assert.NotNull(handler);
        Assert.InRange(ParseGrpcTimeout(Assert.Single(handler.Timeouts)), TimeSpan.FromSeconds(40), TimeSpan.FromSeconds(42));
    }

    [Fact]
    public void AddTopicGroupsClient_NoAddress_ResolveFailsNamingAddress()
    {
        var services = new ServiceCollection();
        services.AddTopicGroupsClient(_ => { });
        using ServiceProvider provider = services.BuildServiceProvider();

        var error = Assert.ThrowsAny<Exception>(() => provider.GetRequiredService<TopicGroupsClient>());

        Assert.Contains("TopicGroupsClientOptions.Address", error.ToString());
    }

    [Theory]
    [InlineData(nameof(TopicGroupsClientOptions.ChunkSizeBytes))]
    [InlineData(nameof(TopicGroupsClientOptions.Timeout))]
    [InlineData(nameof(TopicGroupsClientOptions.MaxRetryAttempts))]
    public void Constructor_OutOfRangeOption_ThrowsNamingIt(string option)
    {
        var options = new TopicGroupsClientOptions();
        switch (option)
        {
            case nameof(TopicGroupsClientOptions.ChunkSizeBytes): options.ChunkSizeBytes = 0; break;
            case nameof(TopicGroupsClientOptions.Timeout): options.Timeout = TimeSpan.Zero; break;
            case nameof(TopicGroupsClientOptions.MaxRetryAttempts): options.MaxRetryAttempts = -1; break;
        }

        var error = Assert.Throws<ArgumentOutOfRangeException>(() => Connect(options));

        Assert.Equal(option, error.ParamName);
    }

    /// <summary>grpc-timeout is an integer and a unit: H, M, S, m (ms), u (µs), n (ns).</summary>
    private static TimeSpan ParseGrpcTimeout(string? header)
    {
        Assert.NotNull(header);
        long value = long.Parse(header[..^1], System.Globalization.CultureInfo.InvariantCulture);
        return header[^1] switch
        {
            'H' => TimeSpan.FromHours(value),
            'M' => TimeSpan.FromMinutes(value),
            'S' => TimeSpan.FromSeconds(value),
            'm' => TimeSpan.FromMilliseconds(value),
            'u' => TimeSpan.FromMicroseconds(value),
            'n' => TimeSpan.FromTicks(value / 100),
            _ => throw new FormatException(header),
        };
    }
}
