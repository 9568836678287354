using Grpc.Core;
using TopicGroups.Protos.V1;
using Xunit;

namespace TopicGroups.Server.Tests.Validation;

/// <summary>Bad chunk sequences on StreamGroupDocuments.</summary>
public sealed class StreamValidationTests(TestHost host) : IClassFixture<TestHost>
{
    /// <summary>Sends the chunks, reads to the end, and returns the call's failure.</summary>
    private async Task<RpcException> StreamFailsAsync(StatusCode expected, params StreamGroupDocumentsRequest[] chunks) =>
        await RpcAssert.FailsAsync(expected, async () =>
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

    private static StreamGroupDocumentsRequest Chunk(int index, IEnumerable<Document> documents, GroupingOptions? options = null)
    {
        var chunk = new StreamGroupDocumentsRequest { ChunkIndex = index, Options = options };
        chunk.Documents.AddRange(documents);
        return chunk;
    }

    [Fact]
    public async Task StreamGroupDocuments_ChunkIndexGap_InvalidArgumentOnChunkIndex()
    {
        var documents = TestBatches.Valid(6);

        RpcException error = await StreamFailsAsync(
            StatusCode.InvalidArgument,
            Chunk(0, documents.Take(3), new GroupingOptions { GroupCount = 2 }),
            Chunk(2, documents.Skip(3)));

        var violation = RpcAssert.Single(error, "chunk_index");
        Assert.Contains("is 2 but chunk 1 was expected", violation.Description);
    }

    [Fact]
    public async Task StreamGroupDocuments_ChunkIndexRepeated_InvalidArgumentOnChunkIndex()
    {
        var documents = TestBatches.Valid(6);

        RpcException error = await StreamFailsAsync(
            StatusCode.InvalidArgument,
            Chunk(0, documents.Take(3), new GroupingOptions { GroupCount = 2 }),
            Chunk(0, documents.Skip(3)));

        Assert.Contains("is 0 but chunk 1 was expected", RpcAssert.Single(error, "chunk_index").Description);
    }

    [Fact]
    public async Task StreamGroupDocuments_FirstChunkNotZero_InvalidArgument()
    {
        RpcException error = await StreamFailsAsync(
            StatusCode.InvalidArgument,
            Chunk(1, TestBatches.Valid(3), new GroupingOptions { GroupCount = 2 }));

        Assert.Contains("chunk 0 was expected", RpcAssert.Single(error, "chunk_index").Description);
    }

    [Fact]
    public async Task StreamGroupDocuments_OptionsOnLaterChunk_FieldViolation()
    {
        var documents = TestBatches.Valid(6);

        RpcException error = await StreamFailsAsync(
            StatusCode.InvalidArgument,
            Chunk(0, documents.Take(3), new GroupingOptions { GroupCount = 2 }),
            Chunk(1, documents.Skip(3), new GroupingOptions { GroupCount = 3 }));

        Assert.Contains("chunk 1", RpcAssert.Single(error, "options").Description);
    }

    [Fact]
    public async Task StreamGroupDocuments_DuplicateIdAcrossChunks_ViolationUsesIndexInWholeBatch()
    {
        var documents = TestBatches.Valid(6);
        documents[4].Id = documents[0].Id;

        RpcException error = await StreamFailsAsync(
            StatusCode.InvalidArgument,
            Chunk(0, documents.Take(3), new GroupingOptions { GroupCount = 2 }),
            Chunk(1, documents.Skip(3)));

        Assert.Contains("documents[0]", RpcAssert.Single(error, "documents[4].id").Description);
    }

    [Fact]
    public async Task StreamGroupDocuments_NoChunks_ViolationsOnDocumentsAndOptions()
    {
        RpcException error = await StreamFailsAsync(StatusCode.InvalidArgument);

        RpcAssert.Single(error, "documents");
        RpcAssert.Single(error, "options");
    }
}
