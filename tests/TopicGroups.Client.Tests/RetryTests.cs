using System.Diagnostics;
using System.Net;
using System.Net.Http.Headers;
using Google.Protobuf;
using Google.Protobuf.WellKnownTypes;
using Google.Rpc;
using Grpc.Core;
using Grpc.Net.Client;
using Microsoft.Data.Sqlite;
using TopicGroups.Protos.V1;
using TopicGroups.Server.Tests;
using Xunit;

namespace TopicGroups.Client.Tests;

/// <summary>
/// The client's retries against the real server in memory, with a handler in between that loses replies after the
/// server has done the work, or answers for the server with a chosen status.
/// </summary>
public sealed class RetryTests : IDisposable
{
    private const int Seed = 777;
    private readonly string _folder = Directory.CreateTempSubdirectory("topicgroups-client-retry-").FullName;
    private readonly StoreTestHost _host;
    private readonly List<IDisposable> _disposables = [];

    public RetryTests()
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

    private (TopicGroupsClient Client, FaultHandler Faults) Connect(TopicGroupsClientOptions options)
    {
        var faults = new FaultHandler(_host.Factory.Server.CreateHandler());
        var channel = GrpcChannel.ForAddress(_host.Factory.Server.BaseAddress, new GrpcChannelOptions
        {
            HttpHandler = faults,
            MaxReceiveMessageSize = options.MaxResponseBytes,
        });
        _disposables.Add(channel);
        return (new TopicGroupsClient(channel, options), faults);
    }

    private static TopicGroupsClientOptions FastRetries(int attempts = 3) => new() { MaxRetryAttempts = attempts, RetryDelay = TimeSpan.FromMilliseconds(5) };

    private async Task<int> SavedCountAsync() => (await _host.Client.ListGroupingsAsync(new ListGroupingsRequest())).Groupings.Count;

    [Fact]
    public async Task GroupDocumentsAsync_ReplyLostAfterTheServerSaved_RetryGetsTheSameReplyAndNothingIsSavedTwice()
    {
        var (client, faults) = Connect(FastRetries());
        var (documents, _) = TestBatches.WellSeparated(groupCount: 3, perTheme: 20, dimensions: 16, seed: Seed);
        faults.LoseRepliesOfNext(1);

        GroupDocumentsResponse response = await client.GroupDocumentsAsync(documents, new GroupingOptions { GroupCount = 3, Save = true });

        Assert.Equal(["GroupDocuments", "GroupDocuments"], faults.Methods);
        Assert.Equal(1, faults.RepliesLost);
        Assert.StartsWith("groupings/grouping-", response.SavedGroupingName);
        Assert.Equal(1, await SavedCountAsync());   // without the request id the retry would have saved a second grouping
    }

    [Fact]
    public async Task GroupDocumentsAsync_StreamedReplyLost_WholeBatchResentFromChunkZeroAndSavedOnce()
    {
        var (client, faults) = Connect(FastRetries());
        var (documents, _) = TestBatches.WellSeparated(groupCount: 4, perTheme: 300, dimensions: 64, seed: Seed);
        var progress = new RecordingProgress<GroupingProgress>();   // a progress sink makes the client stream
        faults.LoseRepliesOfNext(1);

        GroupDocumentsResponse response = await client.GroupDocumentsAsync(
            documents, new GroupingOptions { GroupCount = 4, SaveAs = "ferry-retried" }, progress, CancellationToken.None);

        Assert.Equal(["StreamGroupDocuments", "StreamGroupDocuments"], faults.Methods);
        Assert.Equal("groupings/ferry-retried", response.SavedGroupingName);   // no ALREADY_EXISTS from its own first attempt
        Assert.Equal(1200, response.Documents.Count);
        Assert.Equal(1, await SavedCountAsync());
    }

    [Fact]
    public async Task GroupDocumentsAsync_CallerChosenRequestIdRepeated_SecondCallAnsweredFromTheFirst()
    {
        var (client, _) = Connect(FastRetries());
        var (documents, _) = TestBatches.WellSeparated(groupCount: 2, perTheme: 10, dimensions: 8, seed: Seed);
        var options = new GroupingOptions { GroupCount = 2, Save = true };

        GroupDocumentsResponse first = await client.GroupDocumentsAsync("import-2026-12-02-a", documents, options, null, CancellationToken.None);
        GroupDocumentsResponse again = await client.GroupDocumentsAsync("import-2026-12-02-a", documents, options, null, CancellationToken.None);

        Assert.Equal(first, again);   // timings included: it did not run again
        Assert.Equal(1, await SavedCountAsync());
    }

    [Fact]
    public async Task GroupDocumentsAsync_AutomaticRequestIdsOff_LostReplyRetriedAndSavedTwice()
    {
        // What the request id prevents, shown by turning it off.
        var options = FastRetries();
        options.AutomaticRequestIds = false;
        var (client, faults) = Connect(options);
        var (documents, _) = TestBatches.WellSeparated(groupCount: 2, perTheme: 10, dimensions: 8, seed: Seed);
        faults.LoseRepliesOfNext(1);

        await client.GroupDocumentsAsync(documents, new GroupingOptions { GroupCount = 2, Save = true });

        Assert.Equal(2, await SavedCountAsync());
    }

    [Fact]
    public async Task GroupDocumentsAsync_BusyWithRetryInfo_WaitsTheServersDelayThenSucceeds()
    {
        var (client, faults) = Connect(FastRetries());
        faults.AnswerNext(1, StatusCode.ResourceExhausted, retryDelay: TimeSpan.FromMilliseconds(400));
        var stopwatch = Stopwatch.StartNew();

        await client.GroupDocumentsAsync(TestBatches.Valid(8), new GroupingOptions { GroupCount = 2 });

        Assert.Equal(2, faults.Methods.Count);
        Assert.True(faults.SecondAttemptAfter >= TimeSpan.FromMilliseconds(380), $"retried after {faults.SecondAttemptAfter}; the server asked for 400 ms");
        Assert.True(stopwatch.Elapsed < TimeSpan.FromSeconds(5));
    }

    [Fact]
    public async Task GroupDocumentsAsync_ResourceExhaustedWithoutRetryInfo_NotRetried()
    {
        var (client, faults) = Connect(FastRetries());
        faults.AnswerNext(1, StatusCode.ResourceExhausted, retryDelay: null);

        await RpcAssert.FailsAsync(
            StatusCode.ResourceExhausted, () => client.GroupDocumentsAsync(TestBatches.Valid(8), new GroupingOptions { GroupCount = 2 }));

        Assert.Single(faults.Methods);
    }

    [Theory]
    [InlineData(StatusCode.Internal)]
    [InlineData(StatusCode.FailedPrecondition)]
    [InlineData(StatusCode.Aborted)]
    public async Task GroupDocumentsAsync_OtherStatus_NotRetried(StatusCode status)
    {
        var (client, faults) = Connect(FastRetries());
        faults.AnswerNext(1, status, retryDelay: null);

        await RpcAssert.FailsAsync(status, () => client.GroupDocumentsAsync(TestBatches.Valid(8), new GroupingOptions { GroupCount = 2 }));

        Assert.Single(faults.Methods);
    }

    [Fact]
    public async Task GroupDocumentsAsync_AlwaysUnavailable_StopsWhenTheRetryBudgetIsSpent()
    {
        var options = new TopicGroupsClientOptions
        {
            MaxRetryAttempts = 50,
            RetryDelay = TimeSpan.FromMilliseconds(100),
            RetryBudget = TimeSpan.FromMilliseconds(700),
        };
        var (client, faults) = Connect(options);
        faults.AnswerNext(1000, StatusCode.Unavailable, retryDelay: null);
        var stopwatch = Stopwatch.StartNew();

        await RpcAssert.FailsAsync(StatusCode.Unavailable, () => client.GroupDocumentsAsync(TestBatches.Valid(8), new GroupingOptions { GroupCount = 2 }));

        // Waits of 50-100, 100-200, 200-400 ms fit in 700 ms at most; the next (400-800 ms) cannot start in time.
        Assert.InRange(faults.Methods.Count, 3, 5);
        Assert.True(stopwatch.Elapsed < TimeSpan.FromSeconds(2), $"took {stopwatch.Elapsed}");
    }

    [Theory]
    [InlineData(0, 100, 50, 100)]
    [InlineData(1, 100, 100, 200)]
    [InlineData(3, 100, 400, 800)]
    [InlineData(20, 100, 15_000, 30_000)]   // capped at MaxBackoff
    public void WaitBefore_Unavailable_ExponentialWithEqualJitter(int attempt, int firstMilliseconds, int lowest, int highest)
    {
        var unavailable = new RpcException(new Grpc.Core.Status(StatusCode.Unavailable, "gone"));
        for (int draw = 0; draw < 200; draw++)
        {
            TimeSpan? wait = CallRetries.WaitBefore(unavailable, attempt, TimeSpan.FromMilliseconds(firstMilliseconds));
            Assert.NotNull(wait);
            Assert.InRange(wait.Value.TotalMilliseconds, lowest, highest);
        }
    }

    /// <summary>
    /// Loses the reply of the next grouping calls after the server has answered them in full (what a connection cut
    /// just before the reply arrives looks like to the client), or answers the next calls itself with a status.
    /// </summary>
    private sealed class FaultHandler(HttpMessageHandler server) : DelegatingHandler(server)
    {
        private readonly Stopwatch _clock = Stopwatch.StartNew();
        private int _repliesToLose;
        private int _answersLeft;
        private StatusCode _answer;
        private TimeSpan? _retryDelay;
        private TimeSpan _firstAttemptEnded;

        public List<string> Methods { get; } = [];

        public int RepliesLost { get; private set; }

        public TimeSpan SecondAttemptAfter { get; private set; }

        public void LoseRepliesOfNext(int calls) => _repliesToLose = calls;

        public void AnswerNext(int calls, StatusCode status, TimeSpan? retryDelay)
        {
            _answersLeft = calls;
            _answer = status;
            _retryDelay = retryDelay;
        }

        protected override async Task<HttpResponseMessage> SendAsync(HttpRequestMessage request, CancellationToken cancellationToken)
        {
            string path = request.RequestUri!.AbsolutePath;
            if (!path.StartsWith("/topicgroups.v1.TopicGroupsService/", StringComparison.Ordinal))
            {
                return await base.SendAsync(request, cancellationToken);
            }

            lock (Methods)
            {
                Methods.Add(path[(path.LastIndexOf('/') + 1)..]);
                if (Methods.Count == 2)
                {
                    SecondAttemptAfter = _clock.Elapsed - _firstAttemptEnded;
                }
            }

            if (_answersLeft > 0)
            {
                _answersLeft--;
                _firstAttemptEnded = _clock.Elapsed;
                return TrailersOnly(request, _answer, _retryDelay);
            }

            HttpResponseMessage response = await base.SendAsync(request, cancellationToken);
            if (_repliesToLose > 0)
            {
                _repliesToLose--;
                await response.Content.LoadIntoBufferAsync(cancellationToken);   // the server finished the call ...
                response.Dispose();
                RepliesLost++;
                // ... and the client never hears: what SocketsHttpHandler throws when the peer resets the connection.
                throw new HttpRequestException(
                    HttpRequestError.ResponseEnded,
                    "Simulated: the connection dropped before the reply arrived.",
                    new IOException("Simulated: connection reset by peer.", new System.Net.Sockets.SocketException((int)System.Net.Sockets.SocketError.ConnectionReset)));
            }

            return response;
        }

        /// <summary>A gRPC "trailers-only" reply: the status in the headers and no body, as a server sends an early error.</summary>
        private static HttpResponseMessage TrailersOnly(HttpRequestMessage request, StatusCode status, TimeSpan? retryDelay)
        {
            var response = new HttpResponseMessage(HttpStatusCode.OK) { RequestMessage = request, Version = HttpVersion.Version20 };
            response.Content = new ByteArrayContent([]);
            response.Content.Headers.ContentType = new MediaTypeHeaderValue("application/grpc");
            response.Headers.Add("grpc-status", ((int)status).ToString(System.Globalization.CultureInfo.InvariantCulture));
            response.Headers.Add("grpc-message", "Simulated by the test handler");
            if (retryDelay is TimeSpan delay)
            {
                var details = new Google.Rpc.Status
                {
                    Code = (int)status,
                    Message = "Simulated: busy",
                    Details = { Any.Pack(new RetryInfo { RetryDelay = Duration.FromTimeSpan(delay) }) },
                };
                response.Headers.Add("grpc-status-details-bin", Convert.ToBase64String(details.ToByteArray()).TrimEnd('='));
            }

            return response;
        }
    }
}
