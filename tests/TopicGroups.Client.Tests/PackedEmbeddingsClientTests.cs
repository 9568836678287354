using System.Collections.Concurrent;
using Google.Protobuf;
using Grpc.Core;
using Grpc.Core.Interceptors;
using Grpc.Net.Client;
using TopicGroups.Protos.V1;
using TopicGroups.Server.Tests;
using Xunit;

namespace TopicGroups.Client.Tests;

/// <summary>
/// The client sends embeddings packed (one block of float32 bytes per message) unless told not to, and the
/// answer is the same as per document; a batch held as a matrix goes the same way without a message per document.
/// </summary>
public sealed class PackedEmbeddingsClientTests(TestHost host) : IClassFixture<TestHost>, IDisposable
{
    private readonly List<IDisposable> _disposables = [];

    public void Dispose() => _disposables.ForEach(d => d.Dispose());

    private (TopicGroupsClient Client, MessageRecorder Sent) Connect(TopicGroupsClientOptions? options = null)
    {
        var channel = GrpcChannel.ForAddress(host.Factory.Server.BaseAddress, new GrpcChannelOptions
        {
            HttpHandler = host.Factory.Server.CreateHandler(),
            MaxReceiveMessageSize = new TopicGroupsClientOptions().MaxResponseBytes,
        });
        _disposables.Add(channel);
        var recorder = new MessageRecorder();
        var client = new TopicGroupsService.TopicGroupsServiceClient(channel.Intercept(recorder));
        return (new TopicGroupsClient(client, options), recorder);
    }

    [Fact]
    public async Task GroupDocumentsAsync_LargeBatch_ChunksCarryPackedEmbeddingsAndSameResultAsPerDocument()
    {
        // 4 themes × 300 documents × 96 values: about 480 KB of embeddings, streamed in chunks of at most 64 KiB.
        var (documents, _) = TestBatches.WellSeparated(groupCount: 4, perTheme: 300, dimensions: 96, seed: 31);
        var options = new GroupingOptions { GroupCount = 4, Seed = 3 };
        var (packed, packedSent) = Connect(new TopicGroupsClientOptions { ChunkSizeBytes = 64 * 1024, StreamingThresholdBytes = 0 });
        var (perDocument, perDocumentSent) = Connect(new TopicGroupsClientOptions { ChunkSizeBytes = 64 * 1024, StreamingThresholdBytes = 0, PackEmbeddings = false });

        GroupDocumentsResponse fromPacked = await packed.GroupDocumentsAsync(documents, options);
        GroupDocumentsResponse fromPerDocument = await perDocument.GroupDocumentsAsync(documents, options);

        List<StreamGroupDocumentsRequest> chunks = packedSent.Chunks.ToList();
        Assert.True(chunks.Count >= 8, $"{chunks.Count} chunks");
        Assert.Equal(documents.Count, chunks[0].DocumentCount);
        Assert.All(chunks.Skip(1), c => Assert.Equal(0, c.DocumentCount));
        Assert.All(chunks, c =>
        {
            Assert.Equal(96, c.EmbeddingDimensions);
            Assert.Equal(c.Documents.Count * 96 * 4, c.PackedEmbeddings.Length);
            Assert.All(c.Documents, d => Assert.Empty(d.Embedding));
            Assert.True(c.CalculateSize() <= 64 * 1024, $"chunk {c.ChunkIndex} has {c.CalculateSize()} bytes");
        });
        Assert.Equal(documents.Select(d => d.Id), chunks.SelectMany(c => c.Documents).Select(d => d.Id));
        Assert.Equal(documents.Select(d => d.Text), chunks.SelectMany(c => c.Documents).Select(d => d.Text));
        Assert.All(perDocumentSent.Chunks, c =>
        {
            Assert.True(c.PackedEmbeddings.IsEmpty && c.Documents.All(d => d.Embedding.Count == 96));
            Assert.True(c.CalculateSize() <= 64 * 1024, $"chunk {c.ChunkIndex} has {c.CalculateSize()} bytes");
        });
        Assert.True(perDocumentSent.Chunks.Count() >= 8, $"{perDocumentSent.Chunks.Count()} per-document chunks");

        Assert.Equal(fromPerDocument.Documents, fromPacked.Documents);
        Assert.Equal(fromPerDocument.Groups, fromPacked.Groups);
        Assert.Equal(fromPerDocument.Statistics.Objective, fromPacked.Statistics.Objective);
    }

    [Fact]
    public async Task GroupDocumentsAsync_SmallBatch_OneUnaryMessageWithPackedEmbeddings()
    {
        var documents = TestBatches.Valid(8);
        var (client, sent) = Connect();

        GroupDocumentsResponse response = await client.GroupDocumentsAsync(documents, new GroupingOptions { GroupCount = 2 });

        GroupDocumentsRequest request = Assert.Single(sent.Unary);
        Assert.Empty(sent.Chunks);
        Assert.Equal(documents[0].Embedding.Count, request.EmbeddingDimensions);
        Assert.Equal(documents.Sum(d => d.Embedding.Count) * 4, request.PackedEmbeddings.Length);
        Assert.All(request.Documents, d => Assert.Empty(d.Embedding));
        Assert.Equal(8, response.Documents.Count);
    }

    [Fact]
    public async Task GroupEmbeddingsAsync_Matrix_SameResultAsDocuments()
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 3, perTheme: 200, dimensions: 64, seed: 17);
        float[] matrix = documents.SelectMany(d => d.Embedding).ToArray();
        var batch = new EmbeddingBatch(documents.Select(d => d.Id).ToList(), documents.Select(d => d.Text).ToList(), matrix, 64);
        var options = new GroupingOptions { GroupCount = 3, Seed = 8 };
        var (client, sent) = Connect(new TopicGroupsClientOptions { ChunkSizeBytes = 32 * 1024 });

        GroupDocumentsResponse fromMatrix = await client.GroupEmbeddingsAsync(batch, options, new RecordingProgress<GroupingProgress>());
        GroupDocumentsResponse fromDocuments = await client.GroupDocumentsAsync(documents, options);

        Assert.True(sent.Chunks.Count(c => c.ChunkIndex == 0) == 1 && sent.Chunks.Count > 4, $"{sent.Chunks.Count} chunks");
        Assert.Equal(fromDocuments.Documents, fromMatrix.Documents);
        Assert.Equal(fromDocuments.Groups, fromMatrix.Groups);
    }

    [Fact]
    public async Task GroupDocumentsAsync_EmbeddingLengthsDiffer_SentPerDocumentSoServerNamesTheDocument()
    {
        var documents = TestBatches.Valid(8);
        documents[6] = TestBatches.Make("odd-one", 1f, 2f, 3f);
        var (client, sent) = Connect();

        RpcException error = await RpcAssert.FailsAsync(
            StatusCode.InvalidArgument,
            () => client.GroupDocumentsAsync(documents, new GroupingOptions { GroupCount = 2 }));

        Assert.True(Assert.Single(sent.Unary).PackedEmbeddings.IsEmpty);
        Assert.Contains("has 3 values", RpcAssert.Single(error, "documents[6].embedding").Description);
    }

    [Fact]
    public void EmbeddingBatch_LengthsDisagree_ArgumentExceptionSaysWhy()
    {
        var ids = new[] { "a", "b" };

        var values = Assert.Throws<ArgumentException>(() => new EmbeddingBatch(ids, null, new float[7], 4));
        var texts = Assert.Throws<ArgumentException>(() => new EmbeddingBatch(ids, ["only one"], new float[8], 4));

        Assert.Contains("2 ids × 4 dimensions = 8", values.Message);
        Assert.Contains("texts has 1 entries but ids has 2", texts.Message);
    }

    [Fact]
    public void Document_Fields_OnlyIdTextAndEmbedding()
    {
        // The packed form sends each document as a copy of its id and text; a new Document field must be copied too.
        Assert.Equal(["id", "text", "embedding"], Document.Descriptor.Fields.InFieldNumberOrder().Select(f => f.Name));
    }

    /// <summary>Keeps a copy of every grouping request the client sends (unary messages and stream chunks).</summary>
    private sealed class MessageRecorder : Interceptor
    {
        public ConcurrentQueue<GroupDocumentsRequest> Unary { get; } = new();

        public ConcurrentQueue<StreamGroupDocumentsRequest> Chunks { get; } = new();

        public override AsyncUnaryCall<TResponse> AsyncUnaryCall<TRequest, TResponse>(
            TRequest request, ClientInterceptorContext<TRequest, TResponse> context, AsyncUnaryCallContinuation<TRequest, TResponse> continuation)
        {
            if (request is GroupDocumentsRequest grouping)
            {
                Unary.Enqueue(grouping.Clone());
            }

            return continuation(request, context);
        }

        public override AsyncDuplexStreamingCall<TRequest, TResponse> AsyncDuplexStreamingCall<TRequest, TResponse>(
            ClientInterceptorContext<TRequest, TResponse> context, AsyncDuplexStreamingCallContinuation<TRequest, TResponse> continuation)
        {
            AsyncDuplexStreamingCall<TRequest, TResponse> call = continuation(context);
            return new AsyncDuplexStreamingCall<TRequest, TResponse>(
                new RecordingWriter<TRequest>(call.RequestStream, this),
                call.ResponseStream,
                call.ResponseHeadersAsync,
                call.GetStatus,
                call.GetTrailers,
                call.Dispose);
        }

        private sealed class RecordingWriter<T>(IClientStreamWriter<T> inner, MessageRecorder recorder) : IClientStreamWriter<T>
        {
            public WriteOptions? WriteOptions
            {
                get => inner.WriteOptions;
                set => inner.WriteOptions = value;
            }

            public Task CompleteAsync() => inner.CompleteAsync();

            public Task WriteAsync(T message)
            {
                // Parsed from its bytes now: the packed buffer is reused for the next chunk once this one is written.
                if (message is StreamGroupDocumentsRequest chunk)
                {
                    recorder.Chunks.Enqueue(StreamGroupDocumentsRequest.Parser.ParseFrom(chunk.ToByteArray()));
                }

                return inner.WriteAsync(message);
            }

            public Task WriteAsync(T message, CancellationToken cancellationToken)
            {
                if (message is StreamGroupDocumentsRequest chunk)
                {
                    recorder.Chunks.Enqueue(StreamGroupDocumentsRequest.Parser.ParseFrom(chunk.ToByteArray()));
                }

                return inner.WriteAsync(message, cancellationToken);
            }
        }
    }
}
