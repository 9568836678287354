using TopicGroups.Benchmarks.Load;
using Xunit;
using Xunit.Abstractions;

namespace TopicGroups.Client.Tests;

/// <summary>
/// Short versions of the load and fault runs (bench `load` mode, docs/operations.md): the real server executable on
/// 127.0.0.1, several clients calling back to back for a few seconds, the server killed and restarted mid-run.
/// </summary>
public sealed class LoadAndFaultTests(ITestOutputHelper output) : IDisposable
{
    private readonly string _folder = Directory.CreateTempSubdirectory("topicgroups-load-test-").FullName;

    public void Dispose() => Directory.Delete(_folder, recursive: true);

    [Fact]
    public async Task Load_FourClientsForFiveSeconds_EveryCallSucceedsAndEverySaveIsStoredOnce()
    {
        var settings = new LoadSettings { Clients = 4, Duration = TimeSpan.FromSeconds(5), DocumentsPerCall = 300 };

        LoadReport report = await LoadRun.RunAsync(settings, ServerProcess.DefaultExecutable, _folder);
        output.WriteLine(report.ToText());

        Assert.True(report.CallsDone >= 4, $"only {report.CallsDone} calls finished");
        Assert.Empty(report.ErrorsByStatus);
        Assert.Equal(report.CallsDone, report.StoredGroupings);
        Assert.Equal((0, 0), (report.RepliesWithMissingGrouping, report.RepliesWithWrongGrouping));
        Assert.InRange(report.P50Milliseconds, 0.1, report.P99Milliseconds);
        Assert.True(report.ServerPeakMemoryBytes > 20L * 1024 * 1024, $"peak {report.ServerPeakMemoryBytes} bytes: not read from the server process?");
    }

    [Fact]
    public async Task Fault_ServerKilledAndRestartedMidRun_ClientsRecoverThroughRetriesAndNothingIsSavedTwice()
    {
        var settings = new LoadSettings
        {
            Clients = 3,
            Duration = TimeSpan.FromSeconds(10),
            DocumentsPerCall = 300,
            KillAfter = TimeSpan.FromSeconds(3),
            DownTime = TimeSpan.FromMilliseconds(500),
        };

        LoadReport report = await LoadRun.RunAsync(settings, ServerProcess.DefaultExecutable, _folder);
        output.WriteLine(report.ToText());

        Assert.Equal(2, report.ServerStarts);
        Assert.Empty(report.ErrorsByStatus);                        // every call got through, some only by retrying
        Assert.True(report.Attempts > report.CallsDone, "no call was retried: the kill did not interrupt anything");
        Assert.Equal(report.CallsDone, report.StoredGroupings);    // no save twice, none lost across the kill
        Assert.Equal((0, 0), (report.RepliesWithMissingGrouping, report.RepliesWithWrongGrouping));
    }
}
