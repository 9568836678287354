using Grpc.Core;
using Microsoft.Extensions.DependencyInjection;
using TopicGroups.Protos.V1;
using TopicGroups.Server.Validation;
using Xunit;

namespace TopicGroups.Server.Tests.Services;

/// <summary>
/// The server copies each batch into an array lent by its BatchArrayPool and takes it back when the call ends. A
/// lent array may be longer than the batch and holds an earlier caller's values: these tests fill it with NaN
/// first, so a grouping that read one value past its own rows would differ from (or fail unlike) the same grouping
/// on a server that keeps no arrays.
/// </summary>
public sealed class BatchArrayReuseTests
{
    private const int Dimensions = 256;

    // 3 × 370 = 1,110 documents × 256 = 284,160 values: over BatchArrayPool.MinKeptValues (262,144).
    private static readonly List<Document> CallerA = TestBatches.WellSeparated(3, perTheme: 370, Dimensions, seed: 71).Documents;

    // Another caller's batch, 60 documents fewer (3 × 350 × 256 = 268,800 values, over the pool's minimum too): it
    // gets A's longer array, A's values past its own rows.
    private static readonly List<Document> CallerB = TestBatches.WellSeparated(3, perTheme: 350, Dimensions, seed: 72).Documents;

    private static readonly GroupingOptions Options = new() { GroupCount = 3, Seed = 9 };

    private sealed class PoolHost(long keptBytes) : TestHost(new Dictionary<string, string?>
    {
        ["TopicGroups:Limits:KeptBatchArrayBytes"] = keptBytes.ToString(System.Globalization.CultureInfo.InvariantCulture),
    })
    {
        public BatchArrayPool Pool => Factory.Services.GetRequiredService<BatchArrayPool>();
    }

    private static GroupDocumentsRequest Request(List<Document> documents)
    {
        var request = new GroupDocumentsRequest { Options = Options };
        request.Documents.AddRange(documents);
        return request;
    }

    /// <summary>A kept array of the given length, all NaN, as an earlier batch could have left it.</summary>
    private static float[] Poison(BatchArrayPool pool, int values)
    {
        float[] array = new float[values];
        Array.Fill(array, float.NaN);
        pool.Return(array);
        Assert.Equal(1, pool.KeptCount);
        return array;
    }

    private static async Task<GroupDocumentsResponse> StreamAsync(TestHost host, List<Document> documents, int chunkSize, CancellationToken cancellationToken = default)
    {
        using var call = host.Client.StreamGroupDocuments(cancellationToken: cancellationToken);
        for (int start = 0, index = 0; start < documents.Count; start += chunkSize, index++)
        {
            var chunk = new StreamGroupDocumentsRequest { ChunkIndex = index };
            if (index == 0)
            {
                chunk.Options = Options;
                chunk.DocumentCount = documents.Count;
            }

            chunk.Documents.AddRange(documents.Skip(start).Take(chunkSize));
            await call.RequestStream.WriteAsync(chunk, cancellationToken);
        }

        await call.RequestStream.CompleteAsync();
        GroupDocumentsResponse? result = null;
        await foreach (StreamGroupDocumentsResponse response in call.ResponseStream.ReadAllAsync(cancellationToken))
        {
            result = response.Result ?? result;
        }

        return result ?? throw new InvalidOperationException("no result");
    }

    private static void AssertSameGrouping(GroupDocumentsResponse expected, GroupDocumentsResponse actual)
    {
        Assert.Equal(expected.Documents.Select(p => p.DocumentId), actual.Documents.Select(p => p.DocumentId));
        Assert.Equal(expected.Documents.Select(p => p.GroupId), actual.Documents.Select(p => p.GroupId));
        Assert.Equal(expected.Documents.Select(p => p.Similarity), actual.Documents.Select(p => p.Similarity));
        Assert.Equal(expected.Statistics.Objective, actual.Statistics.Objective);
        Assert.Equal(expected.Groups.Select(g => g.Size), actual.Groups.Select(g => g.Size));
    }

    [Fact]
    public async Task GroupDocuments_LentArraysHoldOtherValuesPastTheBatch_SameGroupsAsWithFreshArrays()
    {
        using var fresh = new PoolHost(keptBytes: 0);
        GroupDocumentsResponse expectedA = await fresh.Client.GroupDocumentsAsync(Request(CallerA));
        GroupDocumentsResponse expectedB = await fresh.Client.GroupDocumentsAsync(Request(CallerB));
        Assert.Equal(0, fresh.Pool.KeptCount);

        using var pooled = new PoolHost(keptBytes: 64L * 1024 * 1024);
        float[] poisoned = Poison(pooled.Pool, (CallerA.Count + 37) * Dimensions);

        GroupDocumentsResponse a = await pooled.Client.GroupDocumentsAsync(Request(CallerA));
        GroupDocumentsResponse b = await pooled.Client.GroupDocumentsAsync(Request(CallerB));     // A's values in its array now
        GroupDocumentsResponse aAgain = await StreamAsync(pooled, CallerA, chunkSize: 400);         // streamed, document_count given

        AssertSameGrouping(expectedA, a);
        AssertSameGrouping(expectedB, b);
        AssertSameGrouping(expectedA, aAgain);
        Assert.Equal((1, poisoned.Length * (long)sizeof(float)), (pooled.Pool.KeptCount, pooled.Pool.KeptBytes));
        Assert.Same(poisoned, pooled.Pool.Rent(CallerB.Count * Dimensions));   // every call had it, and gave it back
    }

    [Fact]
    public async Task GroupDocuments_TwoCallsAtOnce_EachGetsItsOwnArrayAndItsOwnGroups()
    {
        using var fresh = new PoolHost(keptBytes: 0);
        GroupDocumentsResponse expectedA = await fresh.Client.GroupDocumentsAsync(Request(CallerA));
        GroupDocumentsResponse expectedB = await fresh.Client.GroupDocumentsAsync(Request(CallerB));

        using var pooled = new PoolHost(keptBytes: 64L * 1024 * 1024);
        Poison(pooled.Pool, (CallerA.Count + 37) * Dimensions);
        for (int round = 0; round < 3; round++)
        {
            Task<GroupDocumentsResponse> a = pooled.Client.GroupDocumentsAsync(Request(CallerA)).ResponseAsync;
            Task<GroupDocumentsResponse> b = StreamAsync(pooled, CallerB, chunkSize: 300);
            await Task.WhenAll(a, b);

            AssertSameGrouping(expectedA, await a);
            AssertSameGrouping(expectedB, await b);
        }

        Assert.InRange(pooled.Pool.KeptCount, 1, 2);
    }

    [Fact]
    public async Task GroupDocuments_RefusedForABadEmbedding_ArrayGoesBack()
    {
        using var pooled = new PoolHost(keptBytes: 64L * 1024 * 1024);
        float[] poisoned = Poison(pooled.Pool, CallerA.Count * Dimensions);
        GroupDocumentsRequest request = Request(CallerA.Select(d => d.Clone()).ToList());
        request.Documents[^1].Embedding[5] = float.PositiveInfinity;

        RpcException error = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, async () => await pooled.Client.GroupDocumentsAsync(request));

        Assert.Contains($"documents[{CallerA.Count - 1}]", error.Status.Detail + string.Join(" ", RpcAssert.Violations(error).Select(v => v.Field)));
        Assert.Same(poisoned, pooled.Pool.Rent(CallerA.Count * Dimensions));
    }

    [Fact]
    public async Task StreamGroupDocuments_CallerCancelsMidStream_ArrayGoesBack()
    {
        using var pooled = new PoolHost(keptBytes: 64L * 1024 * 1024);
        float[] poisoned = Poison(pooled.Pool, CallerA.Count * Dimensions);
        using var cancel = new CancellationTokenSource();
        var call = pooled.Client.StreamGroupDocuments(cancellationToken: cancel.Token);
        var first = new StreamGroupDocumentsRequest { ChunkIndex = 0, Options = Options, DocumentCount = CallerA.Count };
        first.Documents.AddRange(CallerA.Take(100));
        await call.RequestStream.WriteAsync(first);
        Assert.True(await call.ResponseStream.MoveNext(CancellationToken.None));   // chunk 0 was taken in: the array is lent
        Assert.Equal(100, call.ResponseStream.Current.Progress.DocumentsReceived);
        Assert.Equal(0, pooled.Pool.KeptCount);

        cancel.Cancel();
        call.Dispose();

        DateTime giveUp = DateTime.UtcNow.AddSeconds(10);
        while (pooled.Pool.KeptCount == 0 && DateTime.UtcNow < giveUp)
        {
            await Task.Delay(20);
        }

        Assert.Same(poisoned, pooled.Pool.Rent(CallerA.Count * Dimensions));
    }
}
