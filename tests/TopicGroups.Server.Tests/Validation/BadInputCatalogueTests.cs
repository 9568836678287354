using System.Text;
using Google.Protobuf;
using Google.Rpc;
using Grpc.Core;
using Grpc.Health.V1;
using Microsoft.Data.Sqlite;
using TopicGroups.Protos.V1;
using Xunit;
using Xunit.Abstractions;

namespace TopicGroups.Server.Tests.Validation;

/// <summary>
/// The server of the bad-input catalogue (docs/bad-input.md): saved groupings in a SQLite file of its own,
/// text embedding off (so a texts-only batch is refused without loading a model), and a 64 KiB message limit.
/// </summary>
public sealed class CatalogueHost : TestHost, IDisposable
{
    public CatalogueHost()
        : this(Directory.CreateTempSubdirectory("topicgroups-catalogue-").FullName)
    {
    }

    private CatalogueHost(string folder)
        : base(new Dictionary<string, string?>
        {
            ["TopicGroups:Storage:SqlitePath"] = Path.Combine(folder, "groupings.db"),
            ["TopicGroups:Embedding:Enabled"] = "false",
            ["TopicGroups:Limits:MaxMessageBytes"] = "65536",
        })
    {
        Folder = folder;
    }

    public string Folder { get; }

    public new void Dispose()
    {
        base.Dispose();
        SqliteConnection.ClearAllPools();
        Directory.Delete(Folder, recursive: true);
    }
}

/// <summary>
/// The cases of docs/bad-input.md that no other test file covers, each through the real gRPC path, plus a
/// seeded random mutation test. Every rejected call that asked to save is checked to have saved nothing.
/// </summary>
public sealed class BadInputCatalogueTests(CatalogueHost host, ITestOutputHelper output) : IClassFixture<CatalogueHost>
{
    private TopicGroupsService.TopicGroupsServiceClient Client => host.Client;

    private static GroupDocumentsRequest Request(IEnumerable<Document> documents, GroupingOptions options)
    {
        var request = new GroupDocumentsRequest { Options = options };
        request.Documents.AddRange(documents);
        return request;
    }

    private static StreamGroupDocumentsRequest Chunk(int index, IEnumerable<Document> documents, GroupingOptions? options = null)
    {
        var chunk = new StreamGroupDocumentsRequest { ChunkIndex = index, Options = options };
        chunk.Documents.AddRange(documents);
        return chunk;
    }

    private async Task<List<string>> SavedNamesAsync()
    {
        var names = new List<string>();
        string token = string.Empty;
        do
        {
            ListGroupingsResponse page = await Client.ListGroupingsAsync(new ListGroupingsRequest { PageSize = 1000, PageToken = token });
            names.AddRange(page.Groupings.Select(g => g.Name));
            token = page.NextPageToken;
        }
        while (token.Length > 0);
        names.Sort(StringComparer.Ordinal);
        return names;
    }

    /// <summary>Runs a call that must fail with <paramref name="expected"/>; checks ListGroupings is unchanged afterwards.</summary>
    private async Task<RpcException> RejectedAndNothingSavedAsync(StatusCode expected, Func<Task> call)
    {
        List<string> before = await SavedNamesAsync();
        RpcException exception = await RpcAssert.FailsAsync(expected, call);
        Assert.False(string.IsNullOrWhiteSpace(exception.Status.Detail), "a rejection must carry a message");
        Assert.Equal(before, await SavedNamesAsync());
        return exception;
    }

    /// <summary>Sends the chunks, reads to the end; the call's failure surfaces as an RpcException.</summary>
    private async Task StreamAsync(params StreamGroupDocumentsRequest[] chunks)
    {
        using var call = Client.StreamGroupDocuments();
        try
        {
            foreach (StreamGroupDocumentsRequest chunk in chunks)
            {
                await call.RequestStream.WriteAsync(chunk);
            }

            await call.RequestStream.CompleteAsync();
        }
        catch (Exception)
        {
            // The server ended the call early (a write then fails, even as CANCELLED); its status arrives on the response stream.
        }

        await foreach (var _ in call.ResponseStream.ReadAllAsync())
        {
        }
    }

    private async Task RouteStreamAsync(params StreamRouteDocumentsRequest[] chunks)
    {
        using var call = Client.StreamRouteDocuments();
        try
        {
            foreach (StreamRouteDocumentsRequest chunk in chunks)
            {
                await call.RequestStream.WriteAsync(chunk);
            }

            await call.RequestStream.CompleteAsync();
        }
        catch (Exception)
        {
            // As above: the server's status arrives on the response stream.
        }

        await foreach (var _ in call.ResponseStream.ReadAllAsync())
        {
        }
    }

    private async Task<string> SaveSmallGroupingAsync(string id)
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 2, perTheme: 5, dimensions: 8, seed: 5);
        GroupDocumentsResponse response = await Client.GroupDocumentsAsync(
            Request(documents, new GroupingOptions { GroupCount = 2, SaveAs = id, ReplaceSaved = true }));
        return response.SavedGroupingName;
    }

    [Fact]
    public async Task GroupDocuments_NaNWithSaveName_InvalidArgumentAndNothingSaved()
    {
        var documents = TestBatches.Valid(6);
        documents[2].Embedding[1] = float.NaN;

        RpcException error = await RejectedAndNothingSavedAsync(StatusCode.InvalidArgument,
            () => Client.GroupDocumentsAsync(Request(documents, new GroupingOptions { GroupCount = 2, SaveAs = "nan-batch" })).ResponseAsync);

        Assert.Contains("NaN at position 1", RpcAssert.Single(error, "documents[2].embedding").Description);
        await RpcAssert.FailsAsync(StatusCode.NotFound, () => Client.GetGroupingAsync(new GetGroupingRequest { Name = "groupings/nan-batch" }).ResponseAsync);
    }

    [Fact]
    public async Task GroupDocuments_GroupCountAboveDocumentsWithSaveName_NothingSaved()
    {
        RpcException error = await RejectedAndNothingSavedAsync(StatusCode.InvalidArgument,
            () => Client.GroupDocumentsAsync(Request(TestBatches.Valid(3), new GroupingOptions { GroupCount = 5, SaveAs = "too-many" })).ResponseAsync);

        RpcAssert.Single(error, "options.group_count");
    }

    [Fact]
    public async Task GroupDocuments_SomeDocumentsWithoutEmbedding_InvalidArgumentOnTheEmptyOne()
    {
        var documents = TestBatches.Valid(4);
        documents[3].Embedding.Clear();

        RpcException error = await RejectedAndNothingSavedAsync(StatusCode.InvalidArgument,
            () => Client.GroupDocumentsAsync(Request(documents, new GroupingOptions { GroupCount = 2 })).ResponseAsync);

        Assert.Contains("documents[0].embedding has 4 values", RpcAssert.Single(error, "documents[3].embedding").Description);
    }

    [Fact]
    public async Task GroupDocuments_TextsOnlyWhileEmbeddingOff_FailedPreconditionNamesTheKey()
    {
        var documents = TestBatches.Valid(4);
        documents.ForEach(d => d.Embedding.Clear());

        RpcException error = await RejectedAndNothingSavedAsync(StatusCode.FailedPrecondition,
            () => Client.GroupDocumentsAsync(Request(documents, new GroupingOptions { GroupCount = 2, SaveAs = "texts-only" })).ResponseAsync);

        PreconditionFailure? failure = error.GetRpcStatus()?.GetDetail<PreconditionFailure>();
        Assert.NotNull(failure);
        Assert.Equal("TopicGroups:Embedding:Enabled", Assert.Single(failure.Violations).Subject);
    }

    [Fact]
    public async Task GroupDocuments_EmptyTextWithEmbedding_AcceptedTermsFromTheOtherTexts()
    {
        var documents = TestBatches.Valid(6);
        documents[0].Text = string.Empty;

        GroupDocumentsResponse response = await Client.GroupDocumentsAsync(Request(documents, new GroupingOptions { GroupCount = 2, Seed = 1 }));

        Assert.Equal(6, response.Documents.Count);
        Assert.Contains(response.Documents, p => p.DocumentId == "doc-0");
    }

    [Fact]
    public async Task GroupDocuments_MalformedReferenceName_InvalidArgumentOnReference()
    {
        RpcException error = await RejectedAndNothingSavedAsync(StatusCode.InvalidArgument,
            () => Client.GroupDocumentsAsync(Request(TestBatches.Valid(4), new GroupingOptions { GroupCount = 2, Reference = "last week" })).ResponseAsync);

        Assert.Contains("groupings/{grouping}", RpcAssert.Single(error, "options.reference").Description);
    }

    [Fact]
    public async Task GroupDocuments_ReferenceOfOtherDimension_InvalidArgumentStatesBoth()
    {
        string name = await SaveSmallGroupingAsync("eight-dims");

        RpcException error = await RejectedAndNothingSavedAsync(StatusCode.InvalidArgument,
            () => Client.GroupDocumentsAsync(Request(TestBatches.Valid(4), new GroupingOptions { GroupCount = 2, Reference = name })).ResponseAsync);

        Assert.Contains("8-dimensional", RpcAssert.Single(error, "options.reference").Description);
    }

    [Theory]
    [InlineData(1.5f)]
    [InlineData(-0.2f)]
    public async Task GroupDocuments_MinMatchSimilarityOutOfRange_InvalidArgument(float similarity)
    {
        string name = await SaveSmallGroupingAsync("similarity-range");
        var (documents, _) = TestBatches.WellSeparated(groupCount: 2, perTheme: 3, dimensions: 8, seed: 6);

        RpcException error = await RejectedAndNothingSavedAsync(StatusCode.InvalidArgument,
            () => Client.GroupDocumentsAsync(Request(documents,
                new GroupingOptions { GroupCount = 2, Reference = name, MinMatchSimilarity = similarity })).ResponseAsync);

        Assert.Contains("at most 1", RpcAssert.Single(error, "options.min_match_similarity").Description);
    }

    [Fact]
    public async Task GroupDocuments_SaveNameTooLong_InvalidArgumentOnSaveAs()
    {
        RpcException error = await RejectedAndNothingSavedAsync(StatusCode.InvalidArgument,
            () => Client.GroupDocumentsAsync(Request(TestBatches.Valid(4), new GroupingOptions { GroupCount = 2, SaveAs = new string('a', 300) })).ResponseAsync);

        RpcAssert.Single(error, "options.save_as");
    }

    [Fact]
    public async Task GroupDocuments_InvalidUtf8InText_InvalidArgumentNamingUtf8()
    {
        // Raw bytes: a valid request whose first text's marker is replaced by bytes that are not UTF-8.
        var documents = TestBatches.Valid(4);
        documents[0].Text = "QQQQ";
        byte[] bytes = Request(documents, new GroupingOptions { GroupCount = 2 }).ToByteArray();
        int at = bytes.AsSpan().IndexOf("QQQQ"u8);
        bytes[at] = 0xFF;
        bytes[at + 1] = 0xFE;
        var raw = new Method<byte[], GroupDocumentsResponse>(
            MethodType.Unary,
            TopicGroupsService.Descriptor.FullName,
            "GroupDocuments",
            Marshallers.Create(b => b, b => b),
            Marshallers.Create<GroupDocumentsResponse>(r => r.ToByteArray(), GroupDocumentsResponse.Parser.ParseFrom));

        RpcException error = await RejectedAndNothingSavedAsync(StatusCode.InvalidArgument,
            () => host.Channel.CreateCallInvoker().AsyncUnaryCall(raw, null, default, bytes).ResponseAsync);

        Assert.Contains("UTF-8", error.Status.Detail);
        Assert.Contains("UTF-8", RpcAssert.Single(error, "documents[0].text").Description);
    }

    [Fact]
    public async Task StreamGroupDocuments_ChunkAboveMessageLimit_ResourceExhaustedAndNothingSaved()
    {
        var documents = TestBatches.Valid(6);
        documents[4].Text = new string('w', 70_000);

        RpcException error = await RejectedAndNothingSavedAsync(StatusCode.ResourceExhausted,
            () => StreamAsync(Chunk(0, documents.Take(3), new GroupingOptions { GroupCount = 2, SaveAs = "big-chunk" }), Chunk(1, documents.Skip(3))));

        Assert.Contains("65536", error.Status.Detail);
    }

    [Fact]
    public async Task StreamGroupDocuments_DimensionsDifferAcrossChunks_ViolationUsesIndexInWholeBatch()
    {
        var documents = TestBatches.Valid(6);
        documents[4] = TestBatches.Make("doc-4", 1f, 2f, 3f);

        RpcException error = await RejectedAndNothingSavedAsync(StatusCode.InvalidArgument,
            () => StreamAsync(Chunk(0, documents.Take(3), new GroupingOptions { GroupCount = 2, SaveAs = "mixed-dims" }), Chunk(1, documents.Skip(3))));

        Assert.Contains("3", RpcAssert.Single(error, "documents[4].embedding").Description);
    }

    [Fact]
    public async Task StreamGroupDocuments_FirstChunkWithoutOptions_ViolationOnOptions()
    {
        RpcException error = await RejectedAndNothingSavedAsync(StatusCode.InvalidArgument,
            () => StreamAsync(Chunk(0, TestBatches.Valid(4)), Chunk(1, TestBatches.Valid(8).Skip(4))));

        Assert.Contains("is missing", RpcAssert.Single(error, "options").Description);
    }

    [Fact]
    public async Task StreamGroupDocuments_CallerGivesUpMidStream_CancelledAndNothingSaved()
    {
        var documents = TestBatches.Valid(6);

        await RejectedAndNothingSavedAsync(StatusCode.Cancelled, async () =>
        {
            using var cancel = new CancellationTokenSource();
            using var call = Client.StreamGroupDocuments(cancellationToken: cancel.Token);
            await call.RequestStream.WriteAsync(Chunk(0, documents.Take(3), new GroupingOptions { GroupCount = 2, SaveAs = "half-sent" }));
            Assert.True(await call.ResponseStream.MoveNext());   // the server has read chunk 0
            await cancel.CancelAsync();                            // the stream ends without chunk 1 or a completion
            await call.ResponseStream.MoveNext();
        });

        await RpcAssert.FailsAsync(StatusCode.NotFound, () => Client.GetGroupingAsync(new GetGroupingRequest { Name = "groupings/half-sent" }).ResponseAsync);
    }

    [Fact]
    public async Task RouteDocuments_NaNAndZeroVectorAndLongId_OneViolationEach()
    {
        string name = await SaveSmallGroupingAsync("route-values");
        var request = new RouteDocumentsRequest { Grouping = name };
        request.Documents.Add(TestBatches.Make("nan", 1f, float.NaN, 0, 0, 0, 0, 0, 0));
        request.Documents.Add(TestBatches.Make("zero", 0, 0, 0, 0, 0, 0, 0, 0));
        request.Documents.Add(TestBatches.Make(new string('x', 257), 1, 0, 0, 0, 0, 0, 0, 0));

        RpcException error = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => Client.RouteDocumentsAsync(request).ResponseAsync);

        Assert.Contains("NaN", RpcAssert.Single(error, "documents[0].embedding").Description);
        Assert.Contains("all zeros", RpcAssert.Single(error, "documents[1].embedding").Description);
        Assert.Contains("257 characters", RpcAssert.Single(error, "documents[2].id").Description);
    }

    [Fact]
    public async Task StreamRouteDocuments_ChunkOutOfOrder_InvalidArgumentOnChunkIndex()
    {
        string name = await SaveSmallGroupingAsync("route-order");
        var first = new StreamRouteDocumentsRequest { Grouping = name, ChunkIndex = 0 };
        first.Documents.Add(TestBatches.Make("a", 1, 0, 0, 0, 0, 0, 0, 0));
        var skipped = new StreamRouteDocumentsRequest { ChunkIndex = 2 };
        skipped.Documents.Add(TestBatches.Make("b", 0, 1, 0, 0, 0, 0, 0, 0));

        RpcException error = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => RouteStreamAsync(first, skipped));

        Assert.Contains("chunk 1 was expected", RpcAssert.Single(error, "chunk_index").Description);
    }

    [Fact]
    public async Task StreamRouteDocuments_GroupingOnLaterChunk_InvalidArgumentOnGrouping()
    {
        string name = await SaveSmallGroupingAsync("route-later");
        var first = new StreamRouteDocumentsRequest { Grouping = name, ChunkIndex = 0 };
        first.Documents.Add(TestBatches.Make("a", 1, 0, 0, 0, 0, 0, 0, 0));
        var second = new StreamRouteDocumentsRequest { Grouping = name, ChunkIndex = 1 };
        second.Documents.Add(TestBatches.Make("b", 0, 1, 0, 0, 0, 0, 0, 0));

        RpcException error = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => RouteStreamAsync(first, second));

        Assert.Contains("chunk 0 only", RpcAssert.Single(error, "grouping").Description);
    }

    [Fact]
    public async Task StreamRouteDocuments_NoChunks_InvalidArgumentOnGrouping()
    {
        RpcException error = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => RouteStreamAsync());

        Assert.Contains("ended before chunk 0", RpcAssert.Single(error, "grouping").Description);
    }

    [Fact]
    public async Task DeleteGrouping_MalformedName_InvalidArgumentAndNothingDeleted()
    {
        await SaveSmallGroupingAsync("kept-after-bad-delete");

        RpcException error = await RejectedAndNothingSavedAsync(StatusCode.InvalidArgument,
            () => Client.DeleteGroupingAsync(new DeleteGroupingRequest { Name = "groupings/Kept After" }).ResponseAsync);

        RpcAssert.Single(error, "name");
    }

    /// <summary>
    /// Seeded mutations of a valid request, unary and streamed. Every answer is OK or a canonical status with a
    /// message (never UNKNOWN or INTERNAL); a rejected call that asked to save saved nothing; the health check
    /// still says SERVING at the end.
    /// </summary>
    [Fact]
    public async Task MutatedRequests_SeededRandom_ProperStatusAlwaysAndStillServing()
    {
        const int Seed = 20261203;
        const int Calls = 300;
        var random = new Random(Seed);
        var seen = new Dictionary<StatusCode, int>();
        StatusCode[] allowed =
        [
            StatusCode.OK, StatusCode.InvalidArgument, StatusCode.ResourceExhausted, StatusCode.FailedPrecondition,
            StatusCode.NotFound, StatusCode.AlreadyExists, StatusCode.Cancelled,
        ];

        for (int call = 0; call < Calls; call++)
        {
            var (documents, _) = TestBatches.WellSeparated(groupCount: 3, perTheme: 4, dimensions: 8, seed: Seed + call);
            var options = new GroupingOptions { GroupCount = 3, Seed = (ulong)call, RestartCount = 1, MaxIterations = 20 };
            string saveId = $"fuzz-{call}";
            bool save = random.Next(2) == 0;
            if (save)
            {
                options.SaveAs = saveId;
            }

            int mutations = random.Next(4);   // 0: the valid request itself, as a control
            bool truncate = false;
            for (int m = 0; m < mutations; m++)
            {
                truncate |= Mutate(random, documents, options);
            }

            bool streamed = truncate || random.Next(3) == 0;
            StatusCode code;
            string detail = string.Empty;
            try
            {
                if (streamed)
                {
                    await SendStreamedAsync(random, documents, options, truncate);
                }
                else
                {
                    await Client.GroupDocumentsAsync(Request(documents, options));
                }

                code = StatusCode.OK;
            }
            catch (RpcException exception)
            {
                code = exception.StatusCode;
                detail = exception.Status.Detail;
            }

            seen[code] = seen.GetValueOrDefault(code) + 1;
            Assert.True(allowed.Contains(code), $"call {call}: {code} {detail}");
            if (code != StatusCode.OK)
            {
                Assert.False(string.IsNullOrWhiteSpace(detail), $"call {call}: {code} without a message");
                if (save && GroupingNamesAreValid(options.SaveAs))
                {
                    await RpcAssert.FailsAsync(StatusCode.NotFound,
                        () => Client.GetGroupingAsync(new GetGroupingRequest { Name = $"groupings/{options.SaveAs}" }).ResponseAsync);
                }
            }
        }

        output.WriteLine(string.Join(", ", seen.OrderBy(pair => pair.Key).Select(pair => $"{pair.Key}: {pair.Value}")));
        Assert.True(seen.GetValueOrDefault(StatusCode.OK) > 0, "some mutations leave a valid request");
        Assert.True(seen.GetValueOrDefault(StatusCode.InvalidArgument) > Calls / 4, string.Join(", ", seen));
        HealthCheckResponse health = await new Health.HealthClient(host.Channel).CheckAsync(new HealthCheckRequest());
        Assert.Equal(HealthCheckResponse.Types.ServingStatus.Serving, health.Status);
    }

    private static bool GroupingNamesAreValid(string id) =>
        id.Length is > 0 and <= 63 && id.All(c => c is (>= 'a' and <= 'z') or (>= '0' and <= '9') or '-') && id[0] != '-' && id[^1] != '-';

    /// <summary>One random mutation; returns true when the stream should end early.</summary>
    private static bool Mutate(Random random, List<Document> documents, GroupingOptions options)
    {
        Document target = documents[random.Next(documents.Count)];
        switch (random.Next(17))
        {
            case 0: target.Id = string.Empty; break;
            case 1: target.Id = documents[0].Id == target.Id ? documents[^1].Id : documents[0].Id; break;
            case 2: target.Embedding[random.Next(target.Embedding.Count)] = float.NaN; break;
            case 3: target.Embedding[random.Next(target.Embedding.Count)] = random.Next(2) == 0 ? float.PositiveInfinity : float.NegativeInfinity; break;
            case 4:
                int size = random.Next(0, 20);
                var resized = Enumerable.Range(0, size).Select(_ => (float)random.NextDouble()).ToArray();
                target.Embedding.Clear();
                target.Embedding.Add(resized);
                break;
            case 5:
                for (int j = 0; j < target.Embedding.Count; j++)
                {
                    target.Embedding[j] = 0f;
                }

                break;
            case 6: options.GroupCount = -random.Next(1, 1000); break;
            case 7: options.GroupCount = random.Next(2) == 0 ? int.MaxValue : random.Next(13, 5000); break;
            case 8: options.RestartCount = random.Next(2) == 0 ? -1 : int.MaxValue; break;
            case 9: options.MaxIterations = -random.Next(1, 100); break;
            case 10: options.OutlierThreshold = random.Next(3) switch { 0 => double.NaN, 1 => -1, _ => 7.5 }; break;
            case 11: options.GroupCountRange = new GroupCountRange { Minimum = random.Next(-5, 20), Maximum = random.Next(-5, 20) }; break;
            case 12: target.Id = new string('i', random.Next(250, 400)); break;
            case 13: options.SaveAs = random.Next(2) == 0 ? "Bad Name" : "groupings/x"; break;
            case 14: options.Reference = random.Next(2) == 0 ? "groupings/never-made" : "nope"; break;
            case 15: target.Text = new string('t', random.Next(60_000, 80_000)); break;   // around the 64 KiB message limit
            default: return true;
        }

        return false;
    }

    /// <summary>Streams the batch in 1-4 chunks; sometimes misnumbers them or moves the options; when truncate, gives up midway.</summary>
    private async Task SendStreamedAsync(Random random, List<Document> documents, GroupingOptions options, bool truncate)
    {
        int chunkCount = 1 + random.Next(4);
        int per = (documents.Count + chunkCount - 1) / chunkCount;
        var chunks = new List<StreamGroupDocumentsRequest>();
        for (int c = 0; c * per < documents.Count; c++)
        {
            chunks.Add(Chunk(c, documents.Skip(c * per).Take(per), c == 0 ? options : null));
        }

        switch (random.Next(5))
        {
            case 0 when chunks.Count > 1: chunks[^1].ChunkIndex = chunks.Count + 3; break;
            case 1 when chunks.Count > 1: chunks[^1].Options = options; break;
            case 2: chunks[0].ChunkIndex = 1; break;
        }

        if (!truncate)
        {
            await StreamAsync([.. chunks]);
            return;
        }

        using var cancel = new CancellationTokenSource();
        using var call = Client.StreamGroupDocuments(cancellationToken: cancel.Token);
        await call.RequestStream.WriteAsync(chunks[0]);
        await cancel.CancelAsync();
        await call.ResponseStream.MoveNext();
    }
}
