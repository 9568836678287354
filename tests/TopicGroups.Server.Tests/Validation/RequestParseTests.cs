using Google.Protobuf;
using Grpc.Core;
using Grpc.Core.Interceptors;
using Grpc.Health.V1;
using TopicGroups.Protos.V1;
using TopicGroups.Server.Tests.Security;
using Xunit;
using Xunit.Abstractions;

namespace TopicGroups.Server.Tests.Validation;

/// <summary>
/// Requests the protobuf parser refuses (bytes that are not UTF-8 in a string field, truncated messages), sent as raw
/// bytes through the real gRPC path to every kind of method: each is INVALID_ARGUMENT naming the field, saves nothing,
/// and leaves the server serving. docs/bad-input.md, rows 48-48e, 57a and 57b.
/// </summary>
public sealed class RequestParseTests(CatalogueHost host, ITestOutputHelper output) : IClassFixture<CatalogueHost>
{
    // Marks the strings the test breaks: each "QQQQ" in the serialised message gets 0xFF 0xFE as its first two bytes,
    // bytes that can never occur in UTF-8.
    private const string Marker = "QQQQ";

    private TopicGroupsService.TopicGroupsServiceClient Client => host.Client;

    private static byte[] WithBytesThatAreNotUtf8(IMessage message)
    {
        byte[] bytes = message.ToByteArray();
        int from = 0;
        int at;
        while ((at = bytes.AsSpan(from).IndexOf(System.Text.Encoding.ASCII.GetBytes(Marker))) >= 0)
        {
            bytes[from + at] = 0xFF;
            bytes[from + at + 1] = 0xFE;
            from += at + Marker.Length;
        }

        Assert.NotEqual(0, from);   // the marker was there
        return bytes;
    }

    /// <summary>The method <paramref name="name"/> of TopicGroupsService with requests as raw bytes.</summary>
    private static Method<byte[], TResponse> Raw<TResponse>(MethodType type, string name, MessageParser<TResponse> parser)
        where TResponse : IMessage<TResponse> =>
        new(type, TopicGroupsService.Descriptor.FullName, name,
            Marshallers.Create(bytes => bytes, bytes => bytes),
            Marshallers.Create<TResponse>(response => response.ToByteArray(), parser.ParseFrom));

    private static Task<TResponse> UnaryAsync<TResponse>(CallInvoker invoker, string name, MessageParser<TResponse> parser, byte[] request)
        where TResponse : class, IMessage<TResponse> =>
        invoker.AsyncUnaryCall(Raw(MethodType.Unary, name, parser), null, default, request).ResponseAsync;

    /// <summary>Sends the chunks of a duplex method as raw bytes and reads to the end; a failure surfaces as RpcException.</summary>
    private static async Task DuplexAsync<TResponse>(CallInvoker invoker, string name, MessageParser<TResponse> parser, params byte[][] chunks)
        where TResponse : class, IMessage<TResponse>
    {
        using var call = invoker.AsyncDuplexStreamingCall(Raw(MethodType.DuplexStreaming, name, parser), null, default);
        try
        {
            foreach (byte[] chunk in chunks)
            {
                await call.RequestStream.WriteAsync(chunk);
            }

            await call.RequestStream.CompleteAsync();
        }
        catch (Exception)
        {
            // The server ended the call early; its status arrives on the response stream.
        }

        await foreach (var _ in call.ResponseStream.ReadAllAsync())
        {
        }
    }

    private static GroupDocumentsRequest Request(IEnumerable<Document> documents, GroupingOptions options)
    {
        var request = new GroupDocumentsRequest { Options = options };
        request.Documents.AddRange(documents);
        return request;
    }

    private async Task<RpcException> RejectedAndNothingSavedAsync(Func<Task> call)
    {
        ListGroupingsResponse before = await Client.ListGroupingsAsync(new ListGroupingsRequest { PageSize = 1000 });
        RpcException error = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, call);
        ListGroupingsResponse after = await Client.ListGroupingsAsync(new ListGroupingsRequest { PageSize = 1000 });
        Assert.Equal(before.Groupings.Select(g => g.Name).Order(), after.Groupings.Select(g => g.Name).Order());
        return error;
    }

    private async Task<string> SaveGroupingAsync(string id)
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 2, perTheme: 5, dimensions: 8, seed: 5);
        GroupDocumentsResponse response = await Client.GroupDocumentsAsync(
            Request(documents, new GroupingOptions { GroupCount = 2, SaveAs = id, ReplaceSaved = true }));
        return response.SavedGroupingName;
    }

    [Fact]
    public async Task GroupDocuments_IdAndSaveNameNotUtf8_OneViolationEachAndNothingSaved()
    {
        var documents = TestBatches.Valid(5);
        documents[2].Id = Marker + "-2";
        byte[] request = WithBytesThatAreNotUtf8(Request(documents, new GroupingOptions { GroupCount = 2, SaveAs = Marker + "-batch" }));

        RpcException error = await RejectedAndNothingSavedAsync(
            () => UnaryAsync(host.Channel.CreateCallInvoker(), "GroupDocuments", GroupDocumentsResponse.Parser, request));

        Assert.Equal(2, RpcAssert.Violations(error).Count);
        string id = RpcAssert.Single(error, "documents[2].id").Description;
        Assert.Contains("UTF-8", id);
        Assert.Contains("byte 0 of its 6 is 0xFF", id);
        Assert.Contains("UTF-8", RpcAssert.Single(error, "options.save_as").Description);
    }

    [Fact]
    public async Task GroupDocuments_ThirtyTextsNotUtf8_TwentyViolationsReported()
    {
        var documents = TestBatches.Valid(30);
        documents.ForEach(d => d.Text = "ok " + Marker);
        byte[] request = WithBytesThatAreNotUtf8(Request(documents, new GroupingOptions { GroupCount = 2 }));

        RpcException error = await RejectedAndNothingSavedAsync(
            () => UnaryAsync(host.Channel.CreateCallInvoker(), "GroupDocuments", GroupDocumentsResponse.Parser, request));

        Assert.Equal(Enumerable.Range(0, 20).Select(i => $"documents[{i}].text"), RpcAssert.Violations(error).Select(v => v.Field));
        Assert.Contains("byte 3 of its 7 is 0xFF", RpcAssert.Violations(error)[0].Description);
    }

    [Fact]
    public async Task StreamGroupDocuments_TextNotUtf8InLaterChunk_ViolationUsesIndexInWholeBatchAndNothingSaved()
    {
        var documents = TestBatches.Valid(7);
        documents[5].Text = Marker;
        var first = new StreamGroupDocumentsRequest { ChunkIndex = 0, Options = new GroupingOptions { GroupCount = 2, SaveAs = "utf8-stream" } };
        first.Documents.AddRange(documents.Take(3));
        var second = new StreamGroupDocumentsRequest { ChunkIndex = 1 };
        second.Documents.AddRange(documents.Skip(3));

        RpcException error = await RejectedAndNothingSavedAsync(() => DuplexAsync(host.Channel.CreateCallInvoker(), "StreamGroupDocuments",
            StreamGroupDocumentsResponse.Parser, first.ToByteArray(), WithBytesThatAreNotUtf8(second)));

        string description = RpcAssert.Single(error, "documents[5].text").Description;
        Assert.Contains("UTF-8", description);
        Assert.Contains("stream chunk 1", description);
        await RpcAssert.FailsAsync(StatusCode.NotFound, () => Client.GetGroupingAsync(new GetGroupingRequest { Name = "groupings/utf8-stream" }).ResponseAsync);
    }

    [Fact]
    public async Task RouteDocuments_IdNotUtf8_InvalidArgumentOnThatDocument()
    {
        string grouping = await SaveGroupingAsync("utf8-route");
        var (documents, _) = TestBatches.WellSeparated(groupCount: 2, perTheme: 2, dimensions: 8, seed: 7);
        documents[1].Id = Marker;
        var request = new RouteDocumentsRequest { Grouping = grouping };
        request.Documents.AddRange(documents);

        RpcException error = await RpcAssert.FailsAsync(StatusCode.InvalidArgument,
            () => UnaryAsync(host.Channel.CreateCallInvoker(), "RouteDocuments", RouteDocumentsResponse.Parser, WithBytesThatAreNotUtf8(request)));

        Assert.Contains("UTF-8", RpcAssert.Single(error, "documents[1].id").Description);
    }

    [Fact]
    public async Task StreamRouteDocuments_IdNotUtf8InSecondChunk_ViolationUsesIndexInWholeBatch()
    {
        string grouping = await SaveGroupingAsync("utf8-stream-route");
        var (documents, _) = TestBatches.WellSeparated(groupCount: 2, perTheme: 2, dimensions: 8, seed: 8);
        documents[3].Id = Marker;
        var first = new StreamRouteDocumentsRequest { ChunkIndex = 0, Grouping = grouping };
        first.Documents.AddRange(documents.Take(2));
        var second = new StreamRouteDocumentsRequest { ChunkIndex = 1 };
        second.Documents.AddRange(documents.Skip(2));

        RpcException error = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => DuplexAsync(host.Channel.CreateCallInvoker(),
            "StreamRouteDocuments", RouteDocumentsResponse.Parser, first.ToByteArray(), WithBytesThatAreNotUtf8(second)));

        Assert.Contains("stream chunk 1", RpcAssert.Single(error, "documents[3].id").Description);
    }

    [Fact]
    public async Task GetListDelete_StringFieldNotUtf8_InvalidArgumentNamingTheField()
    {
        CallInvoker invoker = host.Channel.CreateCallInvoker();

        RpcException get = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => UnaryAsync(invoker, "GetGrouping", Grouping.Parser,
            WithBytesThatAreNotUtf8(new GetGroupingRequest { Name = "groupings/" + Marker })));
        RpcException list = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => UnaryAsync(invoker, "ListGroupings", ListGroupingsResponse.Parser,
            WithBytesThatAreNotUtf8(new ListGroupingsRequest { PageToken = Marker })));
        RpcException delete = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => UnaryAsync(invoker, "DeleteGrouping",
            Google.Protobuf.WellKnownTypes.Empty.Parser, WithBytesThatAreNotUtf8(new DeleteGroupingRequest { Name = Marker })));

        Assert.Contains("UTF-8", RpcAssert.Single(get, "name").Description);
        Assert.Contains("UTF-8", RpcAssert.Single(list, "page_token").Description);
        Assert.Contains("UTF-8", RpcAssert.Single(delete, "name").Description);
    }

    [Fact]
    public async Task GroupDocuments_TruncatedMessage_InvalidArgumentNamingTheMessageType()
    {
        byte[] whole = Request(TestBatches.Valid(4), new GroupingOptions { GroupCount = 2, SaveAs = "truncated" }).ToByteArray();

        RpcException error = await RejectedAndNothingSavedAsync(
            () => UnaryAsync(host.Channel.CreateCallInvoker(), "GroupDocuments", GroupDocumentsResponse.Parser, whole[..(whole.Length - 3)]));

        Assert.Contains("not a well-formed topicgroups.v1.GroupDocumentsRequest", error.Status.Detail);
    }

    [Fact]
    public async Task RefusedMessages_ThenValidCalls_ServerStillServingAndAnswering()
    {
        CallInvoker invoker = host.Channel.CreateCallInvoker();
        var documents = TestBatches.Valid(6);
        documents[0].Text = Marker;
        byte[] bad = WithBytesThatAreNotUtf8(Request(documents, new GroupingOptions { GroupCount = 2 }));
        for (int i = 0; i < 20; i++)
        {
            await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => UnaryAsync(invoker, "GroupDocuments", GroupDocumentsResponse.Parser, bad));
        }

        HealthCheckResponse health = await new Health.HealthClient(host.Channel).CheckAsync(new HealthCheckRequest());
        documents[0].Text = "a text in UTF-8: déjà vu, 東京";
        GroupDocumentsResponse response = await Client.GroupDocumentsAsync(Request(documents, new GroupingOptions { GroupCount = 2, Seed = 1 }));

        Assert.Equal(HealthCheckResponse.Types.ServingStatus.Serving, health.Status);
        Assert.Equal(6, response.Documents.Count);
    }

    [Fact]
    public async Task GroupDocuments_NotUtf8WithoutApiKey_UnauthenticatedBeforeTheParseError()
    {
        string key = AccessKeys.NewKey();
        Dictionary<string, string?> settings = AccessKeys.Settings(("alpha", key)).ToDictionary(pair => pair.Key, pair => (string?)pair.Value);
        settings["TopicGroups:Storage:SqlitePath"] = Path.Combine(host.Folder, "keys.db");
        using var keyed = new KeyedHost(settings);
        var documents = TestBatches.Valid(4);
        documents[1].Text = Marker;
        byte[] request = WithBytesThatAreNotUtf8(Request(documents, new GroupingOptions { GroupCount = 2 }));
        CallInvoker withKey = keyed.Channel.Intercept(headers =>
        {
            headers.Add("authorization", "Bearer " + key);
            return headers;
        });

        await RpcAssert.FailsAsync(StatusCode.Unauthenticated,
            () => UnaryAsync(keyed.Channel.CreateCallInvoker(), "GroupDocuments", GroupDocumentsResponse.Parser, request));
        RpcException error = await RpcAssert.FailsAsync(StatusCode.InvalidArgument,
            () => UnaryAsync(withKey, "GroupDocuments", GroupDocumentsResponse.Parser, request));

        RpcAssert.Single(error, "documents[1].text");
    }

    [Fact]
    public async Task MutatedBytes_SeededRandom_ProperStatusAlwaysAndStillServing()
    {
        // Byte-level damage to valid requests, unary and streamed: flipped bytes, truncation, bytes that are not UTF-8
        // in a text. Each answer is OK or a canonical code with a message, never UNKNOWN or INTERNAL.
        const int Seed = 20261202;
        const int Calls = 200;
        var random = new Random(Seed);
        StatusCode[] allowed =
        [
            StatusCode.OK, StatusCode.InvalidArgument, StatusCode.ResourceExhausted, StatusCode.FailedPrecondition,
            StatusCode.NotFound, StatusCode.AlreadyExists,
        ];
        var seen = new Dictionary<StatusCode, int>();
        CallInvoker invoker = host.Channel.CreateCallInvoker();
        for (int call = 0; call < Calls; call++)
        {
            var (documents, _) = TestBatches.WellSeparated(groupCount: 2, perTheme: 4, dimensions: 8, seed: call);
            documents[random.Next(documents.Count)].Text = "words " + Marker + " more words";
            var options = new GroupingOptions { GroupCount = 2, Seed = 1 };
            bool streamed = random.Next(2) == 0;
            byte[][] messages;
            if (streamed)
            {
                var first = new StreamGroupDocumentsRequest { ChunkIndex = 0, Options = options };
                first.Documents.AddRange(documents.Take(4));
                var second = new StreamGroupDocumentsRequest { ChunkIndex = 1 };
                second.Documents.AddRange(documents.Skip(4));
                messages = [first.ToByteArray(), second.ToByteArray()];
            }
            else
            {
                messages = [Request(documents, options).ToByteArray()];
            }

            int which = random.Next(messages.Length);
            byte[] damaged = messages[which];
            int damage = random.Next(3);
            int at = random.Next(damaged.Length);
            if (damage == 0)
            {
                damaged[at] = (byte)random.Next(256);
            }
            else if (damage == 1)
            {
                Array.Resize(ref damaged, at);
                messages[which] = damaged;
            }
            else
            {
                int marker = damaged.AsSpan().IndexOf("QQQQ"u8);
                if (marker >= 0)
                {
                    damaged[marker + random.Next(4)] = (byte)(0x80 + random.Next(128));   // a continuation or lead byte out of place
                }
            }

            StatusCode code;
            string detail = string.Empty;
            try
            {
                if (streamed)
                {
                    await DuplexAsync(invoker, "StreamGroupDocuments", StreamGroupDocumentsResponse.Parser, messages);
                }
                else
                {
                    await UnaryAsync(invoker, "GroupDocuments", GroupDocumentsResponse.Parser, messages[0]);
                }

                code = StatusCode.OK;
            }
            catch (RpcException exception)
            {
                code = exception.StatusCode;
                detail = exception.Status.Detail;
            }

            seen[code] = seen.GetValueOrDefault(code) + 1;
            Assert.True(allowed.Contains(code), $"seed {Seed}, call {call} ({(streamed ? "streamed" : "unary")}, damage {damage} at {at}): {code} {detail}");
            Assert.True(code == StatusCode.OK || !string.IsNullOrWhiteSpace(detail), $"seed {Seed}, call {call}: {code} without a message");
        }

        output.WriteLine($"seed {Seed}: " + string.Join(", ", seen.OrderBy(pair => pair.Key).Select(pair => $"{pair.Key}: {pair.Value}")));
        Assert.True(seen.GetValueOrDefault(StatusCode.InvalidArgument) > Calls / 4, string.Join(", ", seen));
        HealthCheckResponse health = await new Health.HealthClient(host.Channel).CheckAsync(new HealthCheckRequest());
        Assert.Equal(HealthCheckResponse.Types.ServingStatus.Serving, health.Status);
    }

    private sealed class KeyedHost(IReadOnlyDictionary<string, string?> settings) : TestHost(settings);
}
