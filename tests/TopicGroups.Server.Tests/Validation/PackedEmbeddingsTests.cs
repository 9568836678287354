using System.Buffers.Binary;
using Google.Protobuf;
using Grpc.Core;
using TopicGroups.Protos.V1;
using Xunit;

namespace TopicGroups.Server.Tests.Validation;

/// <summary>
/// Embeddings sent packed (packed_embeddings: float32 little-endian, row-major, embedding_dimensions per document)
/// instead of per document: the same groups, and every malformed packing answered with INVALID_ARGUMENT naming
/// the field and what was expected.
/// </summary>
public sealed class PackedEmbeddingsTests(TestHost host) : IClassFixture<TestHost>
{
    private const int Dimensions = 8;

    /// <summary>The documents' embeddings as packed bytes, and the documents without them.</summary>
    private static (List<Document> Bare, ByteString Packed) Pack(IEnumerable<Document> documents)
    {
        var bare = new List<Document>();
        var bytes = new List<byte>();
        Span<byte> value = stackalloc byte[4];
        foreach (Document document in documents)
        {
            bare.Add(new Document { Id = document.Id, Text = document.Text });
            foreach (float x in document.Embedding)
            {
                BinaryPrimitives.WriteSingleLittleEndian(value, x);
                bytes.AddRange(value.ToArray());
            }
        }

        return (bare, ByteString.CopyFrom(bytes.ToArray()));
    }

    private static StreamGroupDocumentsRequest PackedChunk(int index, IEnumerable<Document> documents, GroupingOptions? options = null, int dimensions = Dimensions)
    {
        (List<Document> bare, ByteString packed) = Pack(documents);
        var chunk = new StreamGroupDocumentsRequest { ChunkIndex = index, Options = options, PackedEmbeddings = packed, EmbeddingDimensions = dimensions };
        chunk.Documents.AddRange(bare);
        return chunk;
    }

    private static StreamGroupDocumentsRequest PerDocumentChunk(int index, IEnumerable<Document> documents, GroupingOptions? options = null)
    {
        var chunk = new StreamGroupDocumentsRequest { ChunkIndex = index, Options = options };
        chunk.Documents.AddRange(documents);
        return chunk;
    }

    private async Task<GroupDocumentsResponse> StreamAsync(params StreamGroupDocumentsRequest[] chunks)
    {
        using var call = host.Client.StreamGroupDocuments();
        foreach (StreamGroupDocumentsRequest chunk in chunks)
        {
            await call.RequestStream.WriteAsync(chunk);
        }

        await call.RequestStream.CompleteAsync();
        GroupDocumentsResponse? result = null;
        await foreach (StreamGroupDocumentsResponse response in call.ResponseStream.ReadAllAsync())
        {
            result = response.Result ?? result;
        }

        return result ?? throw new InvalidOperationException("no result");
    }

    private async Task<RpcException> StreamFailsAsync(params StreamGroupDocumentsRequest[] chunks) =>
        await RpcAssert.FailsAsync(StatusCode.InvalidArgument, async () =>
        {
            using var call = host.Client.StreamGroupDocuments();
            try
            {
                foreach (StreamGroupDocumentsRequest chunk in chunks)
                {
                    await call.RequestStream.WriteAsync(chunk);
                }

                await call.RequestStream.CompleteAsync();
            }
            catch (Exception exception) when (exception is not RpcException)
            {
                // The server ended the call early; its status arrives on the response stream.
            }

            await foreach (var _ in call.ResponseStream.ReadAllAsync())
            {
            }
        });

    private static List<Document> Batch(int perTheme = 10) => TestBatches.WellSeparated(3, perTheme, Dimensions, seed: 41).Documents;

    [Theory]
    [InlineData(true)]
    [InlineData(false)]
    public async Task StreamGroupDocuments_PackedChunks_SameGroupsAsPerDocument(bool declareDocumentCount)
    {
        List<Document> documents = Batch();
        var options = new GroupingOptions { GroupCount = 3, Seed = 5 };

        GroupDocumentsResponse perDocument = await StreamAsync(
            PerDocumentChunk(0, documents.Take(12), options), PerDocumentChunk(1, documents.Skip(12)));
        StreamGroupDocumentsRequest first = PackedChunk(0, documents.Take(7), options);
        first.DocumentCount = declareDocumentCount ? documents.Count : 0;
        GroupDocumentsResponse packed = await StreamAsync(
            first, PackedChunk(1, documents.Skip(7).Take(13)), PackedChunk(2, documents.Skip(20)));

        Assert.Equal(documents.Select(d => d.Id), packed.Documents.Select(p => p.DocumentId));
        Assert.Equal(perDocument.Documents.Select(p => p.GroupId), packed.Documents.Select(p => p.GroupId));
        Assert.Equal(perDocument.Documents.Select(p => p.Similarity), packed.Documents.Select(p => p.Similarity));
        Assert.Equal(perDocument.Statistics.Objective, packed.Statistics.Objective);
        Assert.Equal(Dimensions, packed.Statistics.Dimensions);
    }

    [Fact]
    public async Task StreamGroupDocuments_LargePackedChunks_SameGroupsAsUnary()
    {
        // 40 KiB of embeddings per chunk: the server parses each into a pooled array and reuses it for the next.
        const int dimensions = 256;
        List<Document> documents = TestBatches.WellSeparated(3, perTheme: 40, dimensions, seed: 43).Documents;
        var options = new GroupingOptions { GroupCount = 3, Seed = 5 };
        var unary = new GroupDocumentsRequest { Options = options };
        unary.Documents.AddRange(documents);

        GroupDocumentsResponse expected = await host.Client.GroupDocumentsAsync(unary);
        GroupDocumentsResponse streamed = await StreamAsync(
            PackedChunk(0, documents.Take(40), options, dimensions),
            PackedChunk(1, documents.Skip(40).Take(40), dimensions: dimensions),
            PackedChunk(2, documents.Skip(80), dimensions: dimensions));

        Assert.Equal(documents.Select(d => d.Id), streamed.Documents.Select(p => p.DocumentId));
        Assert.Equal(expected.Documents.Select(p => p.GroupId), streamed.Documents.Select(p => p.GroupId));
        Assert.Equal(expected.Documents.Select(p => p.Similarity), streamed.Documents.Select(p => p.Similarity));
    }

    [Fact]
    public async Task GroupDocuments_PackedUnary_SameGroupsAsPerDocument()
    {
        List<Document> documents = Batch();
        var options = new GroupingOptions { GroupCount = 3, Seed = 5 };
        var perDocument = new GroupDocumentsRequest { Options = options };
        perDocument.Documents.AddRange(documents);
        (List<Document> bare, ByteString bytes) = Pack(documents);
        var packed = new GroupDocumentsRequest { Options = options, PackedEmbeddings = bytes, EmbeddingDimensions = Dimensions };
        packed.Documents.AddRange(bare);

        GroupDocumentsResponse expected = await host.Client.GroupDocumentsAsync(perDocument);
        GroupDocumentsResponse actual = await host.Client.GroupDocumentsAsync(packed);

        Assert.Equal(expected.Documents.Select(p => p.GroupId), actual.Documents.Select(p => p.GroupId));
        Assert.Equal(expected.Documents.Select(p => p.Similarity), actual.Documents.Select(p => p.Similarity));
    }

    [Fact]
    public async Task StreamGroupDocuments_PackedWrongByteLength_InvalidArgumentStatesExpectedLength()
    {
        List<Document> documents = Batch();
        StreamGroupDocumentsRequest second = PackedChunk(1, documents.Skip(10).Take(5));
        second.PackedEmbeddings = ByteString.CopyFrom(second.PackedEmbeddings.Span[..^4]);   // one value short

        RpcException error = await StreamFailsAsync(
            PackedChunk(0, documents.Take(10), new GroupingOptions { GroupCount = 3 }), second);

        string description = RpcAssert.Single(error, "packed_embeddings").Description;
        Assert.Contains("has 156 bytes on chunk 1", description);
        Assert.Contains("5 documents × 8 values (embedding_dimensions) × 4 bytes = 160 bytes expected", description);
    }

    [Fact]
    public async Task GroupDocuments_PackedWrongByteLength_InvalidArgumentStatesExpectedLength()
    {
        List<Document> documents = Batch();
        (List<Document> bare, ByteString bytes) = Pack(documents);
        var request = new GroupDocumentsRequest
        {
            Options = new GroupingOptions { GroupCount = 3 },
            PackedEmbeddings = ByteString.CopyFrom(bytes.Span[..^1]),
            EmbeddingDimensions = Dimensions,
        };
        request.Documents.AddRange(bare);

        RpcException error = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, async () => await host.Client.GroupDocumentsAsync(request));

        Assert.Contains("30 documents × 8 values (embedding_dimensions) × 4 bytes = 960 bytes expected", RpcAssert.Single(error, "packed_embeddings").Description);
    }

    [Fact]
    public async Task StreamGroupDocuments_PackedAndPerDocumentInOneChunk_InvalidArgumentOnPackedEmbeddings()
    {
        List<Document> documents = Batch();
        StreamGroupDocumentsRequest chunk = PackedChunk(0, documents, new GroupingOptions { GroupCount = 3 });
        chunk.Documents[4].Embedding.Add(documents[4].Embedding);

        RpcException error = await StreamFailsAsync(chunk);

        string description = RpcAssert.Single(error, "packed_embeddings").Description;
        Assert.Contains("documents[4].embedding also has 8 values", description);
        Assert.Contains("send each embedding one way", description);
    }

    [Fact]
    public async Task StreamGroupDocuments_PerDocumentThenPackedChunk_InvalidArgumentOnPackedEmbeddings()
    {
        List<Document> documents = Batch();

        RpcException error = await StreamFailsAsync(
            PerDocumentChunk(0, documents.Take(10), new GroupingOptions { GroupCount = 3 }), PackedChunk(1, documents.Skip(10)));

        string description = RpcAssert.Single(error, "packed_embeddings").Description;
        Assert.Contains("is set on chunk 1 but documents[0].embedding came in Document.embedding", description);
    }

    [Fact]
    public async Task StreamGroupDocuments_PackedThenPerDocumentChunk_InvalidArgumentOnPackedEmbeddings()
    {
        List<Document> documents = Batch();

        RpcException error = await StreamFailsAsync(
            PackedChunk(0, documents.Take(10), new GroupingOptions { GroupCount = 3 }), PerDocumentChunk(1, documents.Skip(10)));

        Assert.Contains("is empty on chunk 1 but chunk 0 sent packed embeddings", RpcAssert.Single(error, "packed_embeddings").Description);
    }

    [Fact]
    public async Task StreamGroupDocuments_PackedWithoutDimensions_InvalidArgumentOnEmbeddingDimensions()
    {
        StreamGroupDocumentsRequest chunk = PackedChunk(0, Batch(), new GroupingOptions { GroupCount = 3 }, dimensions: 0);

        RpcException error = await StreamFailsAsync(chunk);

        string description = RpcAssert.Single(error, "embedding_dimensions").Description;
        Assert.Contains("is 0 on chunk 0 but packed_embeddings has 960 bytes", description);
        Assert.Contains("(960 bytes for 30 documents would be 8)", description);
    }

    [Fact]
    public async Task StreamGroupDocuments_PackedDimensionsDifferAcrossChunks_InvalidArgumentOnEmbeddingDimensions()
    {
        List<Document> documents = Batch();
        List<Document> wider = documents.Skip(10).Select(d =>
        {
            Document copy = d.Clone();
            copy.Embedding.Add(0.5f);
            return copy;
        }).ToList();

        RpcException error = await StreamFailsAsync(
            PackedChunk(0, documents.Take(10), new GroupingOptions { GroupCount = 3 }), PackedChunk(1, wider, dimensions: Dimensions + 1));

        Assert.Contains("is 9 on chunk 1 but documents[0].embedding has 8 values", RpcAssert.Single(error, "embedding_dimensions").Description);
    }

    [Fact]
    public async Task StreamGroupDocuments_PackedNaNAndZeroRow_ViolationsNameDocumentsInWholeBatch()
    {
        List<Document> documents = Batch();
        documents[13].Embedding[2] = float.NaN;
        for (int j = 0; j < Dimensions; j++)
        {
            documents[21].Embedding[j] = j % 2 == 0 ? 0f : -0f;
        }

        RpcException error = await StreamFailsAsync(
            PackedChunk(0, documents.Take(10), new GroupingOptions { GroupCount = 3 }), PackedChunk(1, documents.Skip(10)));

        Assert.Contains("has NaN at position 2", RpcAssert.Single(error, "documents[13].embedding").Description);
        Assert.Contains("is all zeros", RpcAssert.Single(error, "documents[21].embedding").Description);
        Assert.Equal(2, RpcAssert.Violations(error).Count);
    }

    [Theory]
    [InlineData(29)]
    [InlineData(31)]
    public async Task StreamGroupDocuments_DocumentCountDiffersFromStream_InvalidArgumentOnDocumentCount(int declared)
    {
        List<Document> documents = Batch();
        StreamGroupDocumentsRequest first = PackedChunk(0, documents.Take(10), new GroupingOptions { GroupCount = 3 });
        first.DocumentCount = declared;

        RpcException error = await StreamFailsAsync(first, PackedChunk(1, documents.Skip(10)));

        string description = RpcAssert.Single(error, "document_count").Description;
        Assert.Contains(
            declared < documents.Count ? $"is {declared} (chunk 0) but chunk 1 brings the batch to 30 documents" : $"is {declared} (chunk 0) but the stream brought 30 documents",
            description);
    }

    [Fact]
    public async Task StreamGroupDocuments_DocumentCountOnLaterChunk_InvalidArgumentOnDocumentCount()
    {
        List<Document> documents = Batch();
        StreamGroupDocumentsRequest second = PackedChunk(1, documents.Skip(10));
        second.DocumentCount = 30;

        RpcException error = await StreamFailsAsync(PackedChunk(0, documents.Take(10), new GroupingOptions { GroupCount = 3 }), second);

        Assert.Contains("is set on chunk 1", RpcAssert.Single(error, "document_count").Description);
    }
}
