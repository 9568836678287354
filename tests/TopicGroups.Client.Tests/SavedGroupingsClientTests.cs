using Grpc.Core;
using Grpc.Net.Client;
using Microsoft.Data.Sqlite;
using TopicGroups.Protos.V1;
using TopicGroups.Server.Tests;
using Xunit;

namespace TopicGroups.Client.Tests;

/// <summary>The client's saved-grouping calls against the real server in memory, its groupings in a temporary SQLite file.</summary>
public sealed class SavedGroupingsClientTests : IDisposable
{
    private readonly string _folder = Directory.CreateTempSubdirectory("topicgroups-client-").FullName;
    private readonly StoreTestHost _host;
    private readonly List<IDisposable> _disposables = [];

    public SavedGroupingsClientTests()
    {
        _host = new StoreTestHost(Path.Combine(_folder, "groupings.db"));
    }

    public void Dispose()
    {
        _disposables.ForEach(d => d.Dispose());
        _host.Dispose();
        SqliteConnection.ClearAllPools();
        Directory.Delete(_folder, recursive: true);
    }

    private (TopicGroupsClient Client, RecordingHandler Handler) Connect(TopicGroupsClientOptions? options = null)
    {
        var handler = new RecordingHandler(_host.Factory.Server.CreateHandler());
        var channel = GrpcChannel.ForAddress(_host.Factory.Server.BaseAddress, new GrpcChannelOptions
        {
            HttpHandler = handler,
            MaxReceiveMessageSize = new TopicGroupsClientOptions().MaxResponseBytes,
        });
        _disposables.Add(channel);
        return (new TopicGroupsClient(channel, options), handler);
    }

    [Fact]
    public async Task RouteDocumentsAsync_BatchOverThreshold_StreamedInChunksSameAsUnaryAndInOrder()
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 4, perTheme: 300, dimensions: 256, seed: 3, noise: 0.03);
        var (client, _) = Connect();
        GroupDocumentsResponse grouped = await client.GroupDocumentsAsync(documents.Take(200).ToList(), new GroupingOptions { GroupCount = 4, SaveAs = "ferry" });
        var (streaming, streamingCalls) = Connect(new TopicGroupsClientOptions { StreamingThresholdBytes = 256 * 1024, ChunkSizeBytes = 128 * 1024 });
        var (unary, unaryCalls) = Connect(new TopicGroupsClientOptions { StreamingThresholdBytes = 16 * 1024 * 1024 });

        IReadOnlyList<DocumentPlacement> streamed = await streaming.RouteDocumentsAsync(TopicGroupsClient.GroupingName("ferry"), documents);
        IReadOnlyList<DocumentPlacement> single = await unary.RouteDocumentsAsync("groupings/ferry", documents);

        Assert.Equal(["StreamRouteDocuments"], streamingCalls.Methods);
        Assert.Equal(["RouteDocuments"], unaryCalls.Methods);
        Assert.Equal(single, streamed);
        Assert.Equal(documents.Select(d => d.Id), streamed.Select(p => p.DocumentId));
        Assert.Equal(grouped.Documents.Select(p => p.GroupId), streamed.Take(200).Select(p => p.GroupId));
    }

    [Fact]
    public async Task GetListDelete_SavedGroupings_RoundTripThenNotFound()
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 2, perTheme: 10, dimensions: 8, seed: 4);
        var (client, _) = Connect();
        for (int i = 0; i < 5; i++)
        {
            await client.GroupDocumentsAsync(documents, new GroupingOptions { GroupCount = 2, SaveAs = $"day-{i}" });
        }

        Grouping full = await client.GetGroupingAsync("groupings/day-3", GroupingView.Full);
        var listed = new List<string>();
        await foreach (Grouping grouping in client.ListGroupingsAsync(pageSize: 2))
        {
            listed.Add(grouping.Name);
        }

        await client.DeleteGroupingAsync("groupings/day-0");
        RpcException gone = await Assert.ThrowsAsync<RpcException>(() => client.GetGroupingAsync("groupings/day-0"));

        Assert.All(full.Groups, g => Assert.Equal(8, g.Centre.Count));
        Assert.Equal(["groupings/day-4", "groupings/day-3", "groupings/day-2", "groupings/day-1", "groupings/day-0"], listed);
        Assert.Equal(StatusCode.NotFound, gone.StatusCode);
    }

    [Fact]
    public async Task RouteDocumentsAsync_UnknownGrouping_NotFoundWithoutRetries()
    {
        var (client, handler) = Connect(new TopicGroupsClientOptions { MaxRetryAttempts = 3, RetryDelay = TimeSpan.FromMilliseconds(5) });

        RpcException exception = await Assert.ThrowsAsync<RpcException>(
            () => client.RouteDocumentsAsync("groupings/missing", TestBatches.Valid(3)));

        Assert.Equal(StatusCode.NotFound, exception.StatusCode);
        Assert.Single(handler.Methods);
    }
}
