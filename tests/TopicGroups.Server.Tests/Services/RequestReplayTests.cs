using Grpc.Core;
using Grpc.Core.Interceptors;
using Microsoft.Data.Sqlite;
using TopicGroups.Protos.V1;
using Xunit;

namespace TopicGroups.Server.Tests.Services;

/// <summary>Request ids through the real gRPC path: a retried grouping call runs and saves once.</summary>
public sealed class RequestReplayTests : IDisposable
{
    private const int Seed = 20261202;
    private readonly string _folder = Directory.CreateTempSubdirectory("topicgroups-replay-").FullName;
    private TestHost _host;

    public RequestReplayTests()
    {
        _host = new StoreTestHost(DatabasePath);
    }

    private string DatabasePath => Path.Combine(_folder, "groupings.db");

    private TopicGroupsService.TopicGroupsServiceClient Client => _host.Client;

    public void Dispose()
    {
        _host.Dispose();
        SqliteConnection.ClearAllPools();
        Directory.Delete(_folder, recursive: true);
    }

    private static GroupDocumentsRequest SmallRequest(string requestId, int seed = Seed, bool save = true)
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 3, perTheme: 10, dimensions: 16, seed: seed);
        var request = new GroupDocumentsRequest { RequestId = requestId, Options = new GroupingOptions { GroupCount = 3, Save = save } };
        request.Documents.AddRange(documents);
        return request;
    }

    /// <summary>Chunks of a grouping of a few seconds (unstructured rows, many groups and restarts).</summary>
    private static List<StreamGroupDocumentsRequest> SlowChunks(string requestId)
    {
        List<Document> documents = TestBatches.Random(count: 3000, dimensions: 64, seed: Seed);
        var chunks = new List<StreamGroupDocumentsRequest>();
        for (int c = 0; c < 3; c++)
        {
            var chunk = new StreamGroupDocumentsRequest
            {
                ChunkIndex = c,
                RequestId = c == 0 ? requestId : string.Empty,
                Options = c == 0 ? new GroupingOptions { GroupCount = 150, RestartCount = 8, MaxIterations = 300, Save = true } : null,
            };
            chunk.Documents.AddRange(documents.Skip(c * 1000).Take(1000));
            chunks.Add(chunk);
        }

        return chunks;
    }

    /// <summary>Sends every chunk; with <paramref name="untilComputing"/> returns once the server reports computing.</summary>
    private async Task<AsyncDuplexStreamingCall<StreamGroupDocumentsRequest, StreamGroupDocumentsResponse>> SendAsync(
        IEnumerable<StreamGroupDocumentsRequest> chunks, bool untilComputing, CancellationToken cancellationToken = default)
    {
        var call = Client.StreamGroupDocuments(cancellationToken: cancellationToken);
        try
        {
            foreach (StreamGroupDocumentsRequest chunk in chunks)
            {
                await call.RequestStream.WriteAsync(chunk, cancellationToken);
            }

            await call.RequestStream.CompleteAsync();
        }
        catch (RpcException) when (!cancellationToken.IsCancellationRequested)
        {
            return call;   // the server ended the call early (a rejected chunk); its status is read from the responses
        }

        while (untilComputing && await call.ResponseStream.MoveNext(cancellationToken))
        {
            if (call.ResponseStream.Current.Progress is { Stage: not GroupingStage.Receiving })
            {
                return call;
            }
        }

        return call;
    }

    private static async Task<(GroupDocumentsResponse Result, int ProgressEvents)> ResultOfAsync(
        AsyncDuplexStreamingCall<StreamGroupDocumentsRequest, StreamGroupDocumentsResponse> call)
    {
        int progressEvents = 0;
        GroupDocumentsResponse? result = null;
        await foreach (StreamGroupDocumentsResponse response in call.ResponseStream.ReadAllAsync())
        {
            if (response.Result is not null)
            {
                result = response.Result;
            }
            else if (response.Progress.Stage != GroupingStage.Receiving)
            {
                progressEvents++;
            }
        }

        return (result ?? throw new InvalidOperationException("the stream ended without a result"), progressEvents);
    }

    private async Task<IReadOnlyList<Grouping>> SavedAsync() => (await Client.ListGroupingsAsync(new ListGroupingsRequest())).Groupings;

    [Fact]
    public async Task GroupDocuments_SameRequestIdAfterItFinished_KeptReplyAndOneSavedGrouping()
    {
        GroupDocumentsResponse first = await Client.GroupDocumentsAsync(SmallRequest("weekly-run-7"));
        await Task.Delay(20);   // a second run would differ at least in its measured seconds
        GroupDocumentsResponse retried = await Client.GroupDocumentsAsync(SmallRequest("weekly-run-7"));

        Assert.StartsWith("groupings/grouping-", first.SavedGroupingName);
        Assert.Equal(first, retried);   // the very same reply, timings included: nothing ran again
        Assert.Equal(first.SavedGroupingName, Assert.Single(await SavedAsync()).Name);
    }

    [Fact]
    public async Task GroupDocuments_NoRequestId_EachCallRunsAndSaves()
    {
        await Client.GroupDocumentsAsync(WithSaveAs(SmallRequest(string.Empty, save: false), "first"));
        await Client.GroupDocumentsAsync(WithSaveAs(SmallRequest(string.Empty, save: false), "second"));

        Assert.Equal(2, (await SavedAsync()).Count);
    }

    private static GroupDocumentsRequest WithSaveAs(GroupDocumentsRequest request, string name)
    {
        request.Options.SaveAs = name;
        return request;
    }

    [Fact]
    public async Task GroupDocuments_KeptReplyEvictedByTheEntryBound_RetryRunsAgainButSavesNothingMore()
    {
        _host.Dispose();
        _host = new BoundedReplayHost(DatabasePath, maxEntries: 1);
        GroupDocumentsResponse first = await Client.GroupDocumentsAsync(SmallRequest("bounded-a"));
        await Client.GroupDocumentsAsync(SmallRequest("bounded-b", seed: Seed + 1));   // pushes bounded-a out

        GroupDocumentsResponse retried = await Client.GroupDocumentsAsync(SmallRequest("bounded-a"));

        Assert.NotEqual(first.Statistics.Seconds, retried.Statistics.Seconds);   // computed again ...
        Assert.Equal(first.SavedGroupingName, retried.SavedGroupingName);         // ... but named, not saved, again
        Assert.Equal(2, (await SavedAsync()).Count);
    }

    private sealed class BoundedReplayHost(string sqlitePath, int maxEntries) : StoreTestHost(sqlitePath, new Dictionary<string, string?>
    {
        ["TopicGroups:RequestReplay:MaxEntries"] = maxEntries.ToString(System.Globalization.CultureInfo.InvariantCulture),
    });

    [Fact]
    public async Task GroupDocuments_SameRequestIdInTwoTenants_EachRunsAndSavesInItsOwnTenant()
    {
        string alphaKey = Security.AccessKeys.NewKey(), betaKey = Security.AccessKeys.NewKey();
        _host.Dispose();
        _host = new ConfiguredHost(DatabasePath, Security.AccessKeys.Settings(("alpha", alphaKey), ("beta", betaKey)));
        TopicGroupsService.TopicGroupsServiceClient alpha = ClientWith(alphaKey), beta = ClientWith(betaKey);

        GroupDocumentsResponse alphaReply = await alpha.GroupDocumentsAsync(SmallRequest("shared-7"));
        GroupDocumentsResponse betaReply = await beta.GroupDocumentsAsync(SmallRequest("shared-7", seed: Seed + 3));   // other content: no clash
        GroupDocumentsResponse betaRetried = await beta.GroupDocumentsAsync(SmallRequest("shared-7", seed: Seed + 3));

        Assert.Equal(betaReply, betaRetried);   // within a tenant the id still replays
        Assert.Equal(alphaReply.SavedGroupingName, Assert.Single((await alpha.ListGroupingsAsync(new ListGroupingsRequest())).Groupings).Name);
        Assert.Equal(betaReply.SavedGroupingName, Assert.Single((await beta.ListGroupingsAsync(new ListGroupingsRequest())).Groupings).Name);
    }

    private TopicGroupsService.TopicGroupsServiceClient ClientWith(string key) =>
        new(_host.Channel.Intercept(headers =>
        {
            headers.Add("authorization", "Bearer " + key);
            return headers;
        }));

    private sealed class ConfiguredHost(string sqlitePath, Dictionary<string, string> settings)
        : StoreTestHost(sqlitePath, settings.ToDictionary(pair => pair.Key, pair => (string?)pair.Value));

    [Fact]
    public async Task GroupDocuments_SameRequestIdOtherDocuments_InvalidArgumentNamingRequestId()
    {
        await Client.GroupDocumentsAsync(SmallRequest("import-2026-12-02"));

        RpcException mismatch = await RpcAssert.FailsAsync(
            StatusCode.InvalidArgument, () => Client.GroupDocumentsAsync(SmallRequest("import-2026-12-02", seed: Seed + 1)).ResponseAsync);

        Assert.Contains("different documents, options or method", RpcAssert.Single(mismatch, "request_id").Description);
        Assert.Single(await SavedAsync());
    }

    [Fact]
    public async Task GroupDocuments_SameRequestIdOtherOptions_InvalidArgument()
    {
        await Client.GroupDocumentsAsync(SmallRequest("import-3"));
        GroupDocumentsRequest changed = SmallRequest("import-3");
        changed.Options.TermCount = 3;

        RpcException mismatch = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => Client.GroupDocumentsAsync(changed).ResponseAsync);

        RpcAssert.Single(mismatch, "request_id");
    }

    [Theory]
    [InlineData("has space")]
    [InlineData("slash/inside")]
    [InlineData("ünïcode")]
    public async Task GroupDocuments_RequestIdOutsideItsAlphabet_InvalidArgumentSayingWhichCharacters(string requestId)
    {
        RpcException bad = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => Client.GroupDocumentsAsync(SmallRequest(requestId)).ResponseAsync);

        Assert.Contains("A-Z", RpcAssert.Single(bad, "request_id").Description);
        Assert.Empty(await SavedAsync());
    }

    [Fact]
    public async Task GroupDocuments_RequestIdOver128Characters_InvalidArgumentStatingTheLimit()
    {
        RpcException bad = await RpcAssert.FailsAsync(
            StatusCode.InvalidArgument, () => Client.GroupDocumentsAsync(SmallRequest(new string('a', 129))).ResponseAsync);

        Assert.Contains("at most 128", RpcAssert.Single(bad, "request_id").Description);
        await Client.GroupDocumentsAsync(SmallRequest(new string('a', 128)));   // the limit itself is fine
    }

    [Fact]
    public async Task GroupDocuments_RetryAfterServerRestart_GroupedAgainButNotSavedAgain()
    {
        GroupDocumentsResponse first = await Client.GroupDocumentsAsync(SmallRequest("nightly-42"));
        _host.Dispose();
        _host = new StoreTestHost(DatabasePath);   // the kept replies are gone; the store remains

        GroupDocumentsResponse retried = await Client.GroupDocumentsAsync(SmallRequest("nightly-42"));

        Assert.Equal(first.SavedGroupingName, retried.SavedGroupingName);
        Assert.Equal(first.Groups.Select(g => g.Size), retried.Groups.Select(g => g.Size));   // the same seed and batch: the same groups
        Assert.Equal(first.Documents.Select(d => d.GroupId), retried.Documents.Select(d => d.GroupId));
        Assert.Equal(first.SavedGroupingName, Assert.Single(await SavedAsync()).Name);
    }

    [Fact]
    public async Task GroupDocuments_RetryAfterRestartWithSaveAs_NoAlreadyExistsAndOneGrouping()
    {
        GroupDocumentsResponse first = await Client.GroupDocumentsAsync(WithSaveAs(SmallRequest("named-1", save: false), "harbour-week"));
        _host.Dispose();
        _host = new StoreTestHost(DatabasePath);

        GroupDocumentsResponse retried = await Client.GroupDocumentsAsync(WithSaveAs(SmallRequest("named-1", save: false), "harbour-week"));

        Assert.Equal("groupings/harbour-week", first.SavedGroupingName);
        Assert.Equal("groupings/harbour-week", retried.SavedGroupingName);
        Assert.Single(await SavedAsync());
    }

    [Fact]
    public async Task GroupDocuments_RetryAfterRestartWithOtherDocuments_InvalidArgument()
    {
        await Client.GroupDocumentsAsync(SmallRequest("nightly-43"));
        _host.Dispose();
        _host = new StoreTestHost(DatabasePath);

        RpcException mismatch = await RpcAssert.FailsAsync(
            StatusCode.InvalidArgument, () => Client.GroupDocumentsAsync(SmallRequest("nightly-43", seed: Seed + 5)).ResponseAsync);

        RpcAssert.Single(mismatch, "request_id");
        Assert.Single(await SavedAsync());
    }

    [Fact]
    public async Task StreamGroupDocuments_RetryWhileFirstStillRunning_WaitsAndGetsTheSameResult()
    {
        using var first = await SendAsync(SlowChunks("stream-retry-1"), untilComputing: true);
        using var retry = await SendAsync(SlowChunks("stream-retry-1"), untilComputing: false);

        var (firstResult, _) = await ResultOfAsync(first);
        var (retriedResult, retriedProgress) = await ResultOfAsync(retry);

        Assert.Equal(firstResult, retriedResult);   // the same object's encoding: one run
        Assert.Equal(0, retriedProgress);           // it waited; it did not compute
        Assert.Equal(firstResult.SavedGroupingName, Assert.Single(await SavedAsync()).Name);
    }

    [Fact]
    public async Task StreamGroupDocuments_FirstAttemptCancelledWhileRetryWaits_RetryRunsItAndSavesOnce()
    {
        using var cancelFirst = new CancellationTokenSource();
        using var first = await SendAsync(SlowChunks("stream-retry-2"), untilComputing: true, cancelFirst.Token);
        using var retry = await SendAsync(SlowChunks("stream-retry-2"), untilComputing: false);
        await Task.Delay(200);   // the retry is waiting on the first attempt

        await cancelFirst.CancelAsync();   // the first caller's connection is gone
        var (retriedResult, retriedProgress) = await ResultOfAsync(retry);

        Assert.True(retriedProgress > 0, "the retry should have computed the grouping itself");
        Assert.Equal(retriedResult.SavedGroupingName, Assert.Single(await SavedAsync()).Name);
    }

    [Fact]
    public async Task StreamGroupDocuments_RequestIdOnLaterChunk_InvalidArgument()
    {
        List<StreamGroupDocumentsRequest> chunks = SlowChunks(string.Empty);
        chunks[1].RequestId = "late";

        using var call = await SendAsync(chunks, untilComputing: false);
        RpcException bad = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => ResultOfAsync(call));

        Assert.Contains("chunk 0 only", RpcAssert.Single(bad, "request_id").Description);
    }

    /// <summary>One chunk of the small batch with its embeddings packed; <paramref name="changedValue"/> alters one float.</summary>
    private static StreamGroupDocumentsRequest PackedChunk(string requestId, bool changedValue = false)
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 3, perTheme: 10, dimensions: 16, seed: Seed);
        float[] values = documents.SelectMany(document => document.Embedding).ToArray();
        if (changedValue)
        {
            values[values.Length / 2] += 0.25f;
        }

        var chunk = new StreamGroupDocumentsRequest
        {
            ChunkIndex = 0,
            RequestId = requestId,
            Options = new GroupingOptions { GroupCount = 3, Save = true },
            EmbeddingDimensions = 16,
            DocumentCount = documents.Count,
            PackedEmbeddings = Google.Protobuf.ByteString.CopyFrom(System.Runtime.InteropServices.MemoryMarshal.AsBytes(values.AsSpan())),
        };
        foreach (Document document in documents)
        {
            Document withoutEmbedding = document.Clone();
            withoutEmbedding.Embedding.Clear();
            chunk.Documents.Add(withoutEmbedding);
        }

        return chunk;
    }

    [Fact]
    public async Task StreamGroupDocuments_PackedRetrySameBytes_KeptReply_OneValueChanged_InvalidArgument()
    {
        using var first = await SendAsync([PackedChunk("packed-retry-1")], untilComputing: false);
        var (firstResult, _) = await ResultOfAsync(first);
        using var retry = await SendAsync([PackedChunk("packed-retry-1")], untilComputing: false);
        var (retriedResult, retriedProgress) = await ResultOfAsync(retry);

        Assert.Equal(firstResult, retriedResult);
        Assert.Equal(0, retriedProgress);

        // Only the packed bytes differ: the fingerprint must still tell the calls apart.
        using var changed = await SendAsync([PackedChunk("packed-retry-1", changedValue: true)], untilComputing: false);
        RpcException mismatch = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => ResultOfAsync(changed));
        Assert.Contains("different documents, options or method", RpcAssert.Single(mismatch, "request_id").Description);
        Assert.Single(await SavedAsync());
    }

    [Fact]
    public async Task GroupDocuments_SameRequestIdAsAStreamedCall_InvalidArgument()
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 3, perTheme: 10, dimensions: 16, seed: Seed);
        var chunk = new StreamGroupDocumentsRequest { ChunkIndex = 0, RequestId = "cross-1", Options = new GroupingOptions { GroupCount = 3 } };
        chunk.Documents.AddRange(documents);
        using var streamed = await SendAsync([chunk], untilComputing: false);
        await ResultOfAsync(streamed);

        RpcException mismatch = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => Client.GroupDocumentsAsync(SmallRequest("cross-1", save: false)).ResponseAsync);

        RpcAssert.Single(mismatch, "request_id");
    }

    private static GroupDocumentsRequest Packed(GroupDocumentsRequest request)
    {
        request.Options.PackedPlacements = true;
        return request;
    }

    [Fact]
    public async Task GroupDocuments_RetryAskingPackedPlacements_KeptReplyStillPacked_FlagChangedIsAnotherRequest()
    {
        GroupDocumentsResponse first = await Client.GroupDocumentsAsync(Packed(SmallRequest("packed-reply-1")));
        GroupDocumentsResponse retried = await Client.GroupDocumentsAsync(Packed(SmallRequest("packed-reply-1")));

        Assert.Equal(first, retried);
        Assert.Empty(retried.Documents);
        Assert.Equal(30, retried.PackedDocuments.GroupIds.Count);

        // The reply's shape is part of the request: the same id cannot be answered in the other shape.
        RpcException mismatch = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => Client.GroupDocumentsAsync(SmallRequest("packed-reply-1")).ResponseAsync);
        RpcAssert.Single(mismatch, "request_id");
        Assert.Single(await SavedAsync());
    }

    [Fact]
    public async Task GroupDocuments_PackedRetryAfterServerRestart_GroupedAgainInPackedShapeNotSavedAgain()
    {
        GroupDocumentsResponse first = await Client.GroupDocumentsAsync(Packed(SmallRequest("packed-reply-2")));
        _host.Dispose();
        _host = new StoreTestHost(DatabasePath);

        GroupDocumentsResponse retried = await Client.GroupDocumentsAsync(Packed(SmallRequest("packed-reply-2")));

        Assert.Empty(retried.Documents);
        Assert.Equal(first.PackedDocuments.GroupIds, retried.PackedDocuments.GroupIds);
        Assert.Equal(first.SavedGroupingName, retried.SavedGroupingName);
        Assert.Equal(first.SavedGroupingName, Assert.Single(await SavedAsync()).Name);
    }

    [Fact]
    public async Task StreamGroupDocuments_RetryAskingPackedPlacements_KeptReplyStillPacked()
    {
        GroupDocumentsRequest request = Packed(SmallRequest("packed-reply-3"));
        StreamGroupDocumentsRequest Chunk()
        {
            var chunk = new StreamGroupDocumentsRequest { ChunkIndex = 0, RequestId = request.RequestId, Options = request.Options };
            chunk.Documents.AddRange(request.Documents);
            return chunk;
        }

        using var first = await SendAsync([Chunk()], untilComputing: false);
        var (firstResult, _) = await ResultOfAsync(first);
        using var retry = await SendAsync([Chunk()], untilComputing: false);
        var (retriedResult, retriedProgress) = await ResultOfAsync(retry);

        Assert.Equal(firstResult, retriedResult);
        Assert.Equal(0, retriedProgress);
        Assert.Empty(retriedResult.Documents);
        Assert.Equal(30, retriedResult.PackedDocuments.Similarities.Count);
    }
}

