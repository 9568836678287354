using System.Collections.Concurrent;
using Grpc.Core;
using Grpc.Core.Interceptors;
using Grpc.Net.Client;
using TopicGroups.Protos.V1;
using TopicGroups.Server.Tests;
using Xunit;

namespace TopicGroups.Client.Tests;

/// <summary>
/// The client asks for packed placements unless told not to and turns them back into one DocumentPlacement per
/// document, so callers get the same reply either way; a server that ignores the flag still works.
/// </summary>
public sealed class PackedPlacementsClientTests(TestHost host) : IClassFixture<TestHost>, IDisposable
{
    private readonly List<IDisposable> _disposables = [];

    public void Dispose() => _disposables.ForEach(d => d.Dispose());

    private (TopicGroupsClient Client, ReplyRecorder Wire) Connect(TopicGroupsClientOptions options, bool serverIgnoresFlag = false)
    {
        var channel = GrpcChannel.ForAddress(host.Factory.Server.BaseAddress, new GrpcChannelOptions
        {
            HttpHandler = host.Factory.Server.CreateHandler(),
            MaxReceiveMessageSize = options.MaxResponseBytes,
        });
        _disposables.Add(channel);
        var recorder = new ReplyRecorder(serverIgnoresFlag);
        return (new TopicGroupsClient(new TopicGroupsService.TopicGroupsServiceClient(channel.Intercept(recorder)), options), recorder);
    }

    private static (List<Document> Documents, GroupingOptions Options) Batch(bool includeMap)
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 3, perTheme: 150, dimensions: 48, seed: 23);
        return (documents, new GroupingOptions { GroupCount = 3, Seed = 9, IncludeMap = includeMap });
    }

    [Theory]
    [InlineData(true, false)]    // unary
    [InlineData(false, false)]   // streamed
    [InlineData(true, true)]
    [InlineData(false, true)]
    public async Task GroupDocumentsAsync_PackedReply_SameDocumentsAsPerDocumentReply(bool unary, bool includeMap)
    {
        var (documents, options) = Batch(includeMap);
        int threshold = unary ? 16 * 1024 * 1024 : 0;
        var (packed, packedWire) = Connect(new TopicGroupsClientOptions { StreamingThresholdBytes = threshold, ChunkSizeBytes = 16 * 1024 });
        var (perDocument, perDocumentWire) = Connect(new TopicGroupsClientOptions { StreamingThresholdBytes = threshold, ChunkSizeBytes = 16 * 1024, PackPlacements = false });

        GroupDocumentsResponse fromPacked = await packed.GroupDocumentsAsync(documents, options);
        GroupDocumentsResponse fromPerDocument = await perDocument.GroupDocumentsAsync(documents, options);

        // On the wire: columns in one reply, messages in the other; the caller's options were not changed.
        GroupDocumentsResponse packedReply = Assert.Single(packedWire.Replies);
        Assert.Empty(packedReply.Documents);
        Assert.Equal(documents.Count, packedReply.PackedDocuments.GroupIds.Count);
        Assert.Null(Assert.Single(perDocumentWire.Replies).PackedDocuments);
        Assert.False(options.PackedPlacements);

        Assert.Null(fromPacked.PackedDocuments);
        Assert.Equal(documents.Select(d => d.Id), fromPacked.Documents.Select(d => d.DocumentId));
        Assert.Equal(fromPerDocument.Documents, fromPacked.Documents);
        Assert.Equal(fromPerDocument.Groups, fromPacked.Groups);
        Assert.Equal(includeMap, fromPacked.Documents.Any(d => d.MapX != 0));
    }

    [Fact]
    public async Task GroupEmbeddingsAsync_PackedReply_IdsFromTheBatchAndSamePlacements()
    {
        var (documents, options) = Batch(includeMap: true);
        float[] matrix = documents.SelectMany(d => d.Embedding).ToArray();
        var batch = new EmbeddingBatch(documents.Select(d => d.Id).ToList(), documents.Select(d => d.Text).ToList(), matrix, 48);
        var (packed, packedWire) = Connect(new TopicGroupsClientOptions { ChunkSizeBytes = 16 * 1024, StreamingThresholdBytes = 0 });
        var (perDocument, _) = Connect(new TopicGroupsClientOptions { ChunkSizeBytes = 16 * 1024, StreamingThresholdBytes = 0, PackPlacements = false });

        GroupDocumentsResponse fromPacked = await packed.GroupEmbeddingsAsync(batch, options);
        GroupDocumentsResponse fromPerDocument = await perDocument.GroupEmbeddingsAsync(batch, options);

        Assert.NotNull(Assert.Single(packedWire.Replies).PackedDocuments);
        Assert.Equal(fromPerDocument.Documents, fromPacked.Documents);
        Assert.Equal(batch.Ids, fromPacked.Documents.Select(d => d.DocumentId));
    }

    [Theory]
    [InlineData(true)]
    [InlineData(false)]
    public async Task GroupDocumentsAsync_ServerIgnoresTheFlag_DocumentsAsSent(bool unary)
    {
        var (documents, options) = Batch(includeMap: false);
        var (client, wire) = Connect(
            new TopicGroupsClientOptions { StreamingThresholdBytes = unary ? 16 * 1024 * 1024 : 0, ChunkSizeBytes = 16 * 1024 }, serverIgnoresFlag: true);

        GroupDocumentsResponse response = await client.GroupDocumentsAsync(documents, options);

        Assert.Null(Assert.Single(wire.Replies).PackedDocuments);
        Assert.Equal(documents.Select(d => d.Id), response.Documents.Select(d => d.DocumentId));
        Assert.All(response.Documents, d => Assert.InRange(d.GroupId, 1, 3));
    }

    [Theory]
    [InlineData("group_ids")]
    [InlineData("similarities")]
    [InlineData("margins")]
    [InlineData("runner_up_group_ids")]
    [InlineData("runner_up_similarities")]
    [InlineData("is_outliers")]
    [InlineData("map_x")]
    [InlineData("map_y")]
    public void Expand_ColumnShorterThanTheBatch_InternalErrorNamingTheColumn(string column)
    {
        var columns = new PackedPlacements();
        for (int i = 0; i < 3; i++)
        {
            columns.GroupIds.Add(1);
            columns.Similarities.Add(0.5f);
            columns.Margins.Add(0.1f);
            columns.RunnerUpGroupIds.Add(2);
            columns.RunnerUpSimilarities.Add(0.4f);
            columns.IsOutliers.Add(false);
            columns.MapX.Add(i);
            columns.MapY.Add(-i);
        }

        var field = (Google.Protobuf.Collections.RepeatedField<float>?)null;
        switch (column)
        {
            case "group_ids": columns.GroupIds.RemoveAt(2); break;
            case "runner_up_group_ids": columns.RunnerUpGroupIds.RemoveAt(2); break;
            case "is_outliers": columns.IsOutliers.RemoveAt(2); break;
            case "similarities": field = columns.Similarities; break;
            case "margins": field = columns.Margins; break;
            case "runner_up_similarities": field = columns.RunnerUpSimilarities; break;
            case "map_x": field = columns.MapX; break;
            case "map_y": field = columns.MapY; break;
        }

        field?.RemoveAt(2);
        var response = new GroupDocumentsResponse { PackedDocuments = columns };

        var error = Assert.Throws<RpcException>(() => PackedPlacementReply.Expand(response, 3, i => $"doc-{i}"));

        Assert.Equal(StatusCode.Internal, error.StatusCode);
        Assert.Contains($"has 2 entries in packed_documents.{column} for the 3 documents sent", error.Status.Detail);
    }

    [Fact]
    public void Expand_ColumnsMatch_OnePlacementPerIdInOrder()
    {
        var columns = new PackedPlacements();
        columns.GroupIds.Add([2, 1]);
        columns.Similarities.Add([0.9f, 0.8f]);
        columns.Margins.Add([0.3f, 0.2f]);
        columns.RunnerUpGroupIds.Add([1, 2]);
        columns.RunnerUpSimilarities.Add([0.6f, 0.6f]);
        columns.IsOutliers.Add([false, true]);

        GroupDocumentsResponse response = PackedPlacementReply.Expand(new GroupDocumentsResponse { PackedDocuments = columns }, 2, i => i == 0 ? "a" : "b");

        Assert.Null(response.PackedDocuments);
        Assert.Equal(
            [
                new DocumentPlacement { DocumentId = "a", GroupId = 2, Similarity = 0.9f, Margin = 0.3f, RunnerUpGroupId = 1, RunnerUpSimilarity = 0.6f },
                new DocumentPlacement { DocumentId = "b", GroupId = 1, Similarity = 0.8f, Margin = 0.2f, RunnerUpGroupId = 2, RunnerUpSimilarity = 0.6f, IsOutlier = true },
            ],
            response.Documents);
    }

    /// <summary>
    /// Keeps each grouping reply as it came over the wire (before the client expands it); when
    /// <c>serverIgnoresFlag</c>, clears packed_placements from every request first, as a server that predates it would.
    /// </summary>
    private sealed class ReplyRecorder(bool serverIgnoresFlag) : Interceptor
    {
        public ConcurrentQueue<GroupDocumentsResponse> Replies { get; } = new();

        public override AsyncUnaryCall<TResponse> AsyncUnaryCall<TRequest, TResponse>(
            TRequest request, ClientInterceptorContext<TRequest, TResponse> context, AsyncUnaryCallContinuation<TRequest, TResponse> continuation)
        {
            if (serverIgnoresFlag && request is GroupDocumentsRequest grouping)
            {
                GroupDocumentsRequest copy = grouping.Clone();
                copy.Options.PackedPlacements = false;
                request = (TRequest)(object)copy;
            }

            AsyncUnaryCall<TResponse> call = continuation(request, context);
            return new AsyncUnaryCall<TResponse>(Record(call.ResponseAsync), call.ResponseHeadersAsync, call.GetStatus, call.GetTrailers, call.Dispose);
        }

        public override AsyncDuplexStreamingCall<TRequest, TResponse> AsyncDuplexStreamingCall<TRequest, TResponse>(
            ClientInterceptorContext<TRequest, TResponse> context, AsyncDuplexStreamingCallContinuation<TRequest, TResponse> continuation)
        {
            AsyncDuplexStreamingCall<TRequest, TResponse> call = continuation(context);
            return new AsyncDuplexStreamingCall<TRequest, TResponse>(
                new FlagClearingWriter<TRequest>(call.RequestStream, serverIgnoresFlag),
                new RecordingReader<TResponse>(call.ResponseStream, this),
                call.ResponseHeadersAsync,
                call.GetStatus,
                call.GetTrailers,
                call.Dispose);
        }

        private async Task<TResponse> Record<TResponse>(Task<TResponse> response)
        {
            TResponse reply = await response;
            if (reply is GroupDocumentsResponse grouping)
            {
                Replies.Enqueue(grouping.Clone());
            }

            return reply;
        }

        private sealed class RecordingReader<T>(IAsyncStreamReader<T> inner, ReplyRecorder recorder) : IAsyncStreamReader<T>
        {
            public T Current => inner.Current;

            public async Task<bool> MoveNext(CancellationToken cancellationToken)
            {
                bool more = await inner.MoveNext(cancellationToken);
                if (more && inner.Current is StreamGroupDocumentsResponse { Result: { } result })
                {
                    recorder.Replies.Enqueue(result.Clone());
                }

                return more;
            }
        }

        private sealed class FlagClearingWriter<T>(IClientStreamWriter<T> inner, bool clear) : IClientStreamWriter<T>
        {
            public WriteOptions? WriteOptions
            {
                get => inner.WriteOptions;
                set => inner.WriteOptions = value;
            }

            public Task CompleteAsync() => inner.CompleteAsync();

            public Task WriteAsync(T message) => inner.WriteAsync(Cleared(message));

            public Task WriteAsync(T message, CancellationToken cancellationToken) => inner.WriteAsync(Cleared(message), cancellationToken);

            private T Cleared(T message)
            {
                if (clear && message is StreamGroupDocumentsRequest { Options: not null } chunk)
                {
                    StreamGroupDocumentsRequest copy = chunk.Clone();
                    copy.Options.PackedPlacements = false;
                    return (T)(object)copy;
                }

                return message;
            }
        }
    }
}
