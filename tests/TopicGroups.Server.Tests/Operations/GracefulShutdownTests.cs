using System.Diagnostics;
using Grpc.Core;
using Grpc.Net.Client;
using Microsoft.AspNetCore.Builder;
using TopicGroups.Protos.V1;
using Xunit;
using Xunit.Abstractions;

namespace TopicGroups.Server.Tests.Operations;

/// <summary>
/// Stopping a real Kestrel server on loopback while groupings run: new and waiting groupings get UNAVAILABLE at once,
/// a running one finishes inside the grace period, and one that outlasts it is stopped with UNAVAILABLE and leaves
/// nothing saved.
/// </summary>
[Collection(TimingSensitiveCollection.Name)]
public sealed class GracefulShutdownTests(ITestOutputHelper output) : IDisposable
{
    private const int Seed = 20261203;
    private readonly string _folder = Directory.CreateTempSubdirectory("topicgroups-shutdown-").FullName;

    public void Dispose() => Directory.Delete(_folder, recursive: true);

    [Fact]
    public async Task Stop_WhileOneRunsAndOneWaits_RunningFinishesAndSavesWaitingGetsUnavailable()
    {
        var (app, address) = await StartAsync(gracePeriodSeconds: 90, shutdownTimeout: "00:01:40");
        using var runs = new ActiveRuns(app.Services);
        using var channel = GrpcChannel.ForAddress(address);
        var client = new TopicGroupsService.TopicGroupsServiceClient(channel);

        // Seconds of work here, also with the code already compiled by other tests: long enough to stop the server
        // under it, far inside the 90 s grace period.
        List<Document> documents = TestBatches.Random(count: 12_000, dimensions: 64, seed: Seed);
        var options = new GroupingOptions { GroupCount = 300, RestartCount = 4, MaxIterations = 40, SaveAs = "kept-through-stop" };
        var running = client.GroupDocumentsAsync(Request(documents, options)).ResponseAsync;
        await WaitUntilComputingAsync(runs);

        // The one slot is taken: this call waits for it (admission waits up to 60 s here).
        var (small, _) = TestBatches.WellSeparated(groupCount: 2, perTheme: 5, dimensions: 8, seed: Seed);
        var waiting = client.GroupDocumentsAsync(Request(small, new GroupingOptions { GroupCount = 2 })).ResponseAsync;
        await Task.Delay(200);
        Assert.False(waiting.IsCompleted, "the second call should be waiting for the busy slot");

        var stopwatch = Stopwatch.StartNew();
        Task stopping = app.StopAsync();
        RpcException refused = await Assert.ThrowsAsync<RpcException>(() => waiting);
        TimeSpan refusedAfter = stopwatch.Elapsed;
        GroupDocumentsResponse finished = await running;
        TimeSpan finishedAfter = stopwatch.Elapsed;
        await stopping;
        output.WriteLine($"waiting call {refused.StatusCode} after {refusedAfter.TotalMilliseconds:F0} ms; running call finished {finishedAfter.TotalSeconds:F2} s after the stop signal; stopped after {stopwatch.Elapsed.TotalSeconds:F2} s");

        Assert.Equal(StatusCode.Unavailable, refused.StatusCode);
        Assert.True(refusedAfter < TimeSpan.FromSeconds(2), $"the waiting call was answered {refusedAfter} after the stop signal");
        Assert.Equal("groupings/kept-through-stop", finished.SavedGroupingName);
        Assert.Equal(12_000, finished.Documents.Count);
        await app.DisposeAsync();

        // Saved whole: a new server on the same file reads it back.
        var (again, againAddress) = await StartAsync(gracePeriodSeconds: 1, shutdownTimeout: "00:00:05");
        await using (again)
        {
            using var againChannel = GrpcChannel.ForAddress(againAddress);
            Grouping saved = await new TopicGroupsService.TopicGroupsServiceClient(againChannel)
                .GetGroupingAsync(new GetGroupingRequest { Name = "groupings/kept-through-stop" });
            Assert.Equal(finished.Groups.Count, saved.Groups.Count);
        }
    }

    [Fact]
    public async Task Stop_RunOutlastsGracePeriod_UnavailableSoonAfterAndNothingSaved()
    {
        var (app, address) = await StartAsync(gracePeriodSeconds: 1, shutdownTimeout: "00:00:15");
        using var runs = new ActiveRuns(app.Services);
        using var channel = GrpcChannel.ForAddress(address);
        var client = new TopicGroupsService.TopicGroupsServiceClient(channel);

        // Tens of seconds of work (3,000 unstructured rows, 600 groups, 64 restarts): far past the 1 s grace period.
        List<Document> documents = TestBatches.Random(count: 3000, dimensions: 48, seed: Seed);
        var options = new GroupingOptions { GroupCount = 600, RestartCount = 64, MaxIterations = 1000, SaveAs = "never-half-saved" };
        var running = client.GroupDocumentsAsync(Request(documents, options)).ResponseAsync;
        await WaitUntilComputingAsync(runs);

        var stopwatch = Stopwatch.StartNew();
        Task stopping = app.StopAsync();
        RpcException stopped = await Assert.ThrowsAsync<RpcException>(() => running);
        TimeSpan answeredAfter = stopwatch.Elapsed;
        await stopping;
        output.WriteLine($"running call {stopped.StatusCode} after {answeredAfter.TotalSeconds:F2} s (grace 1 s): {stopped.Status.Detail}");
        await app.DisposeAsync();

        Assert.Equal(StatusCode.Unavailable, stopped.StatusCode);
        Assert.True(answeredAfter < TimeSpan.FromSeconds(6), $"answered {answeredAfter} after the stop signal with a 1 s grace period");

        var (again, againAddress) = await StartAsync(gracePeriodSeconds: 1, shutdownTimeout: "00:00:05");
        await using (again)
        {
            using var againChannel = GrpcChannel.ForAddress(againAddress);
            await RpcAssert.FailsAsync(StatusCode.NotFound, () => new TopicGroupsService.TopicGroupsServiceClient(againChannel)
                .GetGroupingAsync(new GetGroupingRequest { Name = "groupings/never-half-saved" }).ResponseAsync);
        }
    }

    [Fact]
    public async Task Start_GracePeriodNotBelowShutdownTimeout_RefusedNamingBothKeys()
    {
        // 25 s would fit ASP.NET Core's default 30 s: refused only because HostOptions:ShutdownTimeout is read (20 s).
        var error = await Assert.ThrowsAnyAsync<Exception>(() => StartAsync(gracePeriodSeconds: 25, shutdownTimeout: "00:00:20"));

        Assert.Contains("TopicGroups:Shutdown:GracePeriodSeconds", error.Message);
        Assert.Contains("HostOptions:ShutdownTimeout", error.Message);
    }

    private static GroupDocumentsRequest Request(IEnumerable<Document> documents, GroupingOptions options)
    {
        var request = new GroupDocumentsRequest { Options = options };
        request.Documents.AddRange(documents);
        return request;
    }

    private Task<(WebApplication App, Uri Address)> StartAsync(int gracePeriodSeconds, string shutdownTimeout) =>
        ServerHost.StartInProcessAsync(new Dictionary<string, string>
        {
            ["TopicGroups:Storage:SqlitePath"] = Path.Combine(_folder, "groupings.db"),
            ["TopicGroups:Limits:MaxConcurrentGroupings"] = "1",
            ["TopicGroups:Limits:AdmissionWaitMilliseconds"] = "60000",
            ["TopicGroups:Shutdown:GracePeriodSeconds"] = gracePeriodSeconds.ToString(System.Globalization.CultureInfo.InvariantCulture),
            ["HostOptions:ShutdownTimeout"] = shutdownTimeout,
        });

    /// <summary>Waits until the server's grouping slot is taken (the run has passed admission and is computing).</summary>
    private static async Task WaitUntilComputingAsync(ActiveRuns runs)
    {
        var stopwatch = Stopwatch.StartNew();
        while (runs.Count == 0)
        {
            Assert.True(stopwatch.Elapsed < TimeSpan.FromSeconds(10), "the grouping never started");
            await Task.Delay(10);
        }
    }
}
