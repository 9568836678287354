using Grpc.Core;
using TopicGroups.Protos.V1;
using Xunit;

namespace TopicGroups.Server.Tests.Services;

/// <summary>
/// options.packed_placements through the real gRPC path: the reply carries the same placements as columns in
/// packed_documents, and documents only when the flag is off.
/// </summary>
public sealed class PackedPlacementsTests(TestHost host) : IClassFixture<TestHost>
{
    private const int Seed = 41;

    private static (List<Document> Documents, GroupingOptions Options) Batch(bool packed, bool includeMap)
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 4, perTheme: 60, dimensions: 24, seed: Seed);
        return (documents, new GroupingOptions { GroupCount = 4, Seed = 5, IncludeMap = includeMap, PackedPlacements = packed });
    }

    private async Task<GroupDocumentsResponse> UnaryAsync(bool packed, bool includeMap)
    {
        var (documents, options) = Batch(packed, includeMap);
        var request = new GroupDocumentsRequest { Options = options };
        request.Documents.AddRange(documents);
        return await host.Client.GroupDocumentsAsync(request);
    }

    private async Task<GroupDocumentsResponse> StreamedAsync(bool packed, bool includeMap)
    {
        var (documents, options) = Batch(packed, includeMap);
        using var call = host.Client.StreamGroupDocuments();
        for (int c = 0; c * 100 < documents.Count; c++)
        {
            var chunk = new StreamGroupDocumentsRequest { ChunkIndex = c, Options = c == 0 ? options : null };
            chunk.Documents.AddRange(documents.Skip(c * 100).Take(100));
            await call.RequestStream.WriteAsync(chunk);
        }

        await call.RequestStream.CompleteAsync();
        GroupDocumentsResponse? result = null;
        await foreach (StreamGroupDocumentsResponse response in call.ResponseStream.ReadAllAsync())
        {
            result = response.Result ?? result;
        }

        return result ?? throw new InvalidOperationException("the stream ended without a result");
    }

    /// <summary>Entry i of every column equals documents[i]'s field of the same name.</summary>
    private static void AssertSamePlacements(GroupDocumentsResponse perDocument, GroupDocumentsResponse packed, bool includeMap)
    {
        Assert.Null(perDocument.PackedDocuments);
        Assert.Empty(packed.Documents);
        PackedPlacements columns = Assert.IsType<PackedPlacements>(packed.PackedDocuments);
        RepeatedFieldsOf(perDocument, out var expected);
        Assert.Equal(expected.GroupIds, columns.GroupIds);
        Assert.Equal(expected.Similarities, columns.Similarities);
        Assert.Equal(expected.Margins, columns.Margins);
        Assert.Equal(expected.RunnerUpGroupIds, columns.RunnerUpGroupIds);
        Assert.Equal(expected.RunnerUpSimilarities, columns.RunnerUpSimilarities);
        Assert.Equal(expected.IsOutliers, columns.IsOutliers);
        if (includeMap)
        {
            Assert.Equal(perDocument.Documents.Count, columns.MapX.Count);
            Assert.Equal(expected.MapX, columns.MapX);
            Assert.Equal(expected.MapY, columns.MapY);
            Assert.Contains(columns.MapX, x => x != 0);   // a real map, not zeros
            Assert.Equal(perDocument.Map, packed.Map);
        }
        else
        {
            Assert.Empty(columns.MapX);
            Assert.Empty(columns.MapY);
        }

        Assert.Equal(perDocument.Groups, packed.Groups);
        Assert.Equal(perDocument.Statistics.Objective, packed.Statistics.Objective);
        Assert.True(packed.CalculateSize() < perDocument.CalculateSize(), $"packed {packed.CalculateSize()} bytes, per document {perDocument.CalculateSize()}");
    }

    private static void RepeatedFieldsOf(GroupDocumentsResponse response, out PackedPlacements columns)
    {
        columns = new PackedPlacements();
        foreach (DocumentPlacement placement in response.Documents)
        {
            columns.GroupIds.Add(placement.GroupId);
            columns.Similarities.Add(placement.Similarity);
            columns.Margins.Add(placement.Margin);
            columns.RunnerUpGroupIds.Add(placement.RunnerUpGroupId);
            columns.RunnerUpSimilarities.Add(placement.RunnerUpSimilarity);
            columns.IsOutliers.Add(placement.IsOutlier);
            columns.MapX.Add(placement.MapX);
            columns.MapY.Add(placement.MapY);
        }
    }

    [Theory]
    [InlineData(false)]
    [InlineData(true)]
    public async Task GroupDocuments_PackedPlacements_SamePlacementsAsColumns(bool includeMap)
    {
        GroupDocumentsResponse perDocument = await UnaryAsync(packed: false, includeMap);
        GroupDocumentsResponse packed = await UnaryAsync(packed: true, includeMap);

        Assert.Equal(240, perDocument.Documents.Count);
        AssertSamePlacements(perDocument, packed, includeMap);
    }

    [Theory]
    [InlineData(false)]
    [InlineData(true)]
    public async Task StreamGroupDocuments_PackedPlacements_SamePlacementsAsColumns(bool includeMap)
    {
        GroupDocumentsResponse perDocument = await StreamedAsync(packed: false, includeMap);
        GroupDocumentsResponse packed = await StreamedAsync(packed: true, includeMap);

        Assert.Equal(240, perDocument.Documents.Count);
        AssertSamePlacements(perDocument, packed, includeMap);
    }

    [Fact]
    public async Task GroupDocuments_FlagOff_DocumentsInSendingOrderAndNoColumns()
    {
        var (documents, _) = Batch(packed: false, includeMap: false);

        GroupDocumentsResponse response = await UnaryAsync(packed: false, includeMap: false);

        Assert.Null(response.PackedDocuments);
        Assert.Equal(documents.Select(d => d.Id), response.Documents.Select(d => d.DocumentId));
        Assert.All(response.Documents, d => Assert.InRange(d.GroupId, 1, 4));
    }
}
