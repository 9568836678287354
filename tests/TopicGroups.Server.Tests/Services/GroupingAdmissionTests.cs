using System.Diagnostics;
using Google.Rpc;
using Grpc.Core;
using Microsoft.Data.Sqlite;
using TopicGroups.Protos.V1;
using Xunit;
using Xunit.Abstractions;

namespace TopicGroups.Server.Tests.Services;

/// <summary>Admission through the real gRPC path: a bounded number of groupings at once, and a memory estimate.</summary>
public sealed class GroupingAdmissionTests(ITestOutputHelper output) : IDisposable
{
    private const int Seed = 20261204;
    private readonly string _folder = Directory.CreateTempSubdirectory("topicgroups-admission-").FullName;

    public void Dispose()
    {
        SqliteConnection.ClearAllPools();
        Directory.Delete(_folder, recursive: true);
    }

    private sealed class AdmissionHost(IReadOnlyDictionary<string, string?> settings) : TestHost(settings);

    private AdmissionHost Host(int slots, int waitMilliseconds, long? memoryBytes = null)
    {
        var settings = new Dictionary<string, string?>
        {
            ["TopicGroups:Storage:SqlitePath"] = Path.Combine(_folder, $"groupings-{Guid.NewGuid():N}.db"),
            ["TopicGroups:Limits:MaxConcurrentGroupings"] = slots.ToString(),
            ["TopicGroups:Limits:AdmissionWaitMilliseconds"] = waitMilliseconds.ToString(),
        };
        if (memoryBytes is long bytes)
        {
            settings["TopicGroups:Limits:MaxGroupingMemoryBytes"] = bytes.ToString();
        }

        return new AdmissionHost(settings);
    }

    private static GroupDocumentsRequest Request(IEnumerable<Document> documents, GroupingOptions options)
    {
        var request = new GroupDocumentsRequest { Options = options };
        request.Documents.AddRange(documents);
        return request;
    }

    private static GroupDocumentsRequest SmallRequest(string? saveAs = null)
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 2, perTheme: 6, dimensions: 8, seed: Seed);
        return Request(documents, new GroupingOptions { GroupCount = 2, SaveAs = saveAs ?? string.Empty });
    }

    /// <summary>
    /// Starts a grouping of tens of seconds (6,000 unstructured 128-d rows into 300 groups, 64 restarts) as a stream
    /// and returns once the server reports it computing, i.e. once it holds a slot.
    /// </summary>
    private static async Task<AsyncDuplexStreamingCall<StreamGroupDocumentsRequest, StreamGroupDocumentsResponse>> StartLongRunAsync(
        TestHost host, CancellationToken cancellationToken, DateTime? deadline = null)
    {
        var call = host.Client.StreamGroupDocuments(deadline: deadline, cancellationToken: cancellationToken);
        List<Document> documents = TestBatches.Random(count: 6000, dimensions: 128, seed: Seed);
        for (int c = 0; c < 6; c++)
        {
            var chunk = new StreamGroupDocumentsRequest
            {
                ChunkIndex = c,
                Options = c == 0 ? new GroupingOptions { GroupCount = 300, RestartCount = 64, MaxIterations = 1000 } : null,
            };
            chunk.Documents.AddRange(documents.Skip(c * 1000).Take(1000));
            await call.RequestStream.WriteAsync(chunk, cancellationToken);
        }

        await call.RequestStream.CompleteAsync();
        while (await call.ResponseStream.MoveNext(cancellationToken))
        {
            if (call.ResponseStream.Current.Progress is { Stage: not GroupingStage.Receiving })
            {
                return call;
            }
        }

        throw new InvalidOperationException("the long run ended before it reported computing");
    }

    [Fact]
    public async Task GroupDocuments_AllSlotsBusy_ResourceExhaustedWithRetryInfoThenAdmittedOnceFree()
    {
        using var host = Host(slots: 1, waitMilliseconds: 200);
        using var cancelLongRun = new CancellationTokenSource();
        using var longRun = await StartLongRunAsync(host, cancelLongRun.Token);

        var stopwatch = Stopwatch.StartNew();
        RpcException busy = await RpcAssert.FailsAsync(StatusCode.ResourceExhausted, () => host.Client.GroupDocumentsAsync(SmallRequest("while-busy")).ResponseAsync);
        TimeSpan refusedAfter = stopwatch.Elapsed;

        RetryInfo? retry = busy.GetRpcStatus()?.GetDetail<RetryInfo>();
        Assert.NotNull(retry);
        Assert.True(retry.RetryDelay.ToTimeSpan() > TimeSpan.Zero);
        Assert.Contains("TopicGroups:Limits:MaxConcurrentGroupings", busy.Status.Detail);
        Assert.Equal("concurrent groupings", RpcAssert.Quota(busy).Subject);
        Assert.True(refusedAfter >= TimeSpan.FromMilliseconds(150), $"refused after {refusedAfter}: it should wait its 200 ms first");
        Assert.Empty((await host.Client.ListGroupingsAsync(new ListGroupingsRequest())).Groupings);

        // The caller gives up on the long run; retrying as RetryInfo says gets in once the run has really stopped.
        await cancelLongRun.CancelAsync();
        GroupDocumentsResponse? admitted = null;
        var retrying = Stopwatch.StartNew();
        while (admitted is null && retrying.Elapsed < TimeSpan.FromSeconds(20))
        {
            try
            {
                admitted = await host.Client.GroupDocumentsAsync(SmallRequest());
            }
            catch (RpcException exception) when (exception.StatusCode == StatusCode.ResourceExhausted)
            {
                await Task.Delay(exception.GetRpcStatus()!.GetDetail<RetryInfo>()!.RetryDelay.ToTimeSpan());
            }
        }

        output.WriteLine($"refused after {refusedAfter.TotalMilliseconds:F0} ms; admitted {retrying.Elapsed.TotalSeconds:F1} s after cancelling");
        Assert.NotNull(admitted);
        Assert.Equal(2, admitted.Groups.Count);
    }

    [Fact]
    public async Task GroupDocuments_SlotFreesWithinWait_QueuedCallRunsAfterTheFirst()
    {
        using var host = Host(slots: 1, waitMilliseconds: 30_000);
        using var longRun = await StartLongRunAsync(host, CancellationToken.None, deadline: DateTime.UtcNow.AddSeconds(4));

        var stopwatch = Stopwatch.StartNew();
        GroupDocumentsResponse queued = await host.Client.GroupDocumentsAsync(SmallRequest());
        TimeSpan waited = stopwatch.Elapsed;

        RpcException first = await Assert.ThrowsAsync<RpcException>(async () =>
        {
            while (await longRun.ResponseStream.MoveNext())
            {
            }
        });
        output.WriteLine($"queued call answered after {waited.TotalSeconds:F2} s; first call {first.StatusCode}");
        Assert.Equal(2, queued.Groups.Count);
        Assert.True(first.StatusCode is StatusCode.DeadlineExceeded or StatusCode.Cancelled, $"{first.StatusCode}");
        Assert.True(waited > TimeSpan.FromSeconds(0.5), $"the queued call ran after {waited} while the only slot was taken");
    }

    [Fact]
    public async Task GroupDocuments_EstimateOverMemoryLimit_ResourceExhaustedStatingBothAndNothingSaved()
    {
        using var host = Host(slots: 2, waitMilliseconds: 100, memoryBytes: 1_000_000);
        List<Document> documents = TestBatches.Random(count: 2000, dimensions: 128, seed: Seed);   // 1 MB of embeddings alone

        RpcException error = await RpcAssert.FailsAsync(StatusCode.ResourceExhausted,
            () => host.Client.GroupDocumentsAsync(Request(documents, new GroupingOptions { GroupCount = 10, SaveAs = "too-big" })).ResponseAsync);

        Assert.Contains("2000 documents × 128 dimensions", error.Status.Detail);
        Assert.Contains("TopicGroups:Limits:MaxGroupingMemoryBytes = 1000000", error.Status.Detail);
        Assert.Contains("MiB", error.Status.Detail);
        Assert.Null(error.GetRpcStatus()?.GetDetail<RetryInfo>());   // retrying the same batch cannot help
        Assert.Equal("grouping memory", RpcAssert.Quota(error).Subject);
        Assert.Empty((await host.Client.ListGroupingsAsync(new ListGroupingsRequest())).Groupings);

        // A batch under the estimate limit still runs on the same server.
        Assert.Equal(2, (await host.Client.GroupDocumentsAsync(SmallRequest())).Groups.Count);
    }

    [Theory]
    [InlineData("MaxConcurrentGroupings", "0")]
    [InlineData("AdmissionWaitMilliseconds", "-1")]
    [InlineData("MaxGroupingMemoryBytes", "0")]
    public async Task Start_AdmissionSettingOutOfRange_FailsNamingTheKey(string key, string value)
    {
        // The real host, not WebApplicationFactory: its deferred start raced the failing start and sometimes
        // surfaced an ObjectDisposedException instead of the validation error.
        var error = await Assert.ThrowsAnyAsync<Exception>(async () =>
        {
            await using var app = ServerHost.Build([$"--TopicGroups:Limits:{key}={value}", "--Logging:LogLevel:Default=None"], port: 0);
            await app.StartAsync();
        });

        Assert.Contains($"TopicGroups:Limits:{key} is {value}", error.ToString());
    }
}
