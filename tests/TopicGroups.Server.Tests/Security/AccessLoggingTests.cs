using Grpc.Core;
using Grpc.Net.Client;
using Microsoft.Extensions.Logging;
using TopicGroups.Client;
using TopicGroups.Protos.V1;
using Xunit;

namespace TopicGroups.Server.Tests.Security;

/// <summary>What the server writes to its log about keys: who was admitted or turned away, never the key itself.</summary>
public sealed class AccessLoggingTests
{
    [Fact]
    public async Task RejectedThenAcceptedCall_TraceLogging_KeyAndItsHashNeverLogged()
    {
        string key = AccessKeys.NewKey();
        string wrongKey = AccessKeys.NewKey();
        await using LoopbackServer server = await LoopbackServer.StartAsync(AccessKeys.Settings(("support", key)), LogLevel.Trace);
        using var channel = GrpcChannel.ForAddress(server.Address);

        var rejected = new TopicGroupsClient(channel, new TopicGroupsClientOptions { ApiKey = wrongKey, MaxRetryAttempts = 0 });
        var accepted = new TopicGroupsClient(channel, new TopicGroupsClientOptions { ApiKey = key, MaxRetryAttempts = 0 });
        RpcException failure = await Assert.ThrowsAsync<RpcException>(() => rejected.ListGroupingsAsync().ToListAsync().AsTask());
        var (documents, _) = TestBatches.WellSeparated(groupCount: 2, perTheme: 10, dimensions: 8, seed: 3);
        GroupDocumentsResponse grouped = await accepted.GroupDocumentsAsync(documents, new GroupingOptions { GroupCount = 2, SaveAs = "logged" });
        List<Grouping> listed = await accepted.ListGroupingsAsync().ToListAsync();
        await server.App.StopAsync();

        string log = server.Logs.AllText;
        Assert.Equal(StatusCode.Unauthenticated, failure.StatusCode);
        Assert.Equal("groupings/logged", Assert.Single(listed).Name);
        Assert.Equal("groupings/logged", grouped.SavedGroupingName);
        Assert.Contains("rejected: unknown key", log);                          // the capture sees the access log lines
        Assert.Contains("admitted for tenant support", log);
        Assert.True(server.Logs.Entries.Count > 20, $"only {server.Logs.Entries.Count} log entries at Trace level; is the capture working?");
        foreach (string secret in new[] { key, wrongKey, AccessKeys.Sha256Of(key), AccessKeys.Sha256Of(wrongKey) })
        {
            Assert.DoesNotContain(secret, log, StringComparison.OrdinalIgnoreCase);
        }
    }

    [Fact]
    public async Task Start_AnyAddressWithoutKeys_OneWarningNamingTheSetting()
    {
        await using LoopbackServer server = await LoopbackServer.StartAsync(new Dictionary<string, string> { ["TopicGroups:ListenAnyAddress"] = "true" });

        var warnings = server.Logs.Entries.Where(entry => entry.Level == LogLevel.Warning && entry.Text.Contains("without API keys", StringComparison.Ordinal)).ToList();

        Assert.Single(warnings);
        Assert.Contains("TopicGroups:Access:Keys", warnings[0].Text);
    }

    [Fact]
    public async Task Start_LoopbackWithoutKeys_NoAccessWarning()
    {
        await using LoopbackServer server = await LoopbackServer.StartAsync(new Dictionary<string, string>());

        Assert.DoesNotContain(server.Logs.Entries, entry => entry.Level >= LogLevel.Warning && entry.Category.Contains("Access", StringComparison.Ordinal));
    }

    [Fact]
    public async Task Start_AnyAddressWithKeysWithoutTls_OneWarningThatKeysTravelInClearText()
    {
        var settings = AccessKeys.Settings(("support", AccessKeys.NewKey()));
        settings["TopicGroups:ListenAnyAddress"] = "true";
        await using LoopbackServer server = await LoopbackServer.StartAsync(settings);

        var warning = Assert.Single(server.Logs.Entries, entry => entry.Level == LogLevel.Warning && entry.Category.Contains("Access", StringComparison.Ordinal));

        Assert.Contains("clear text", warning.Text);
        Assert.Contains("TopicGroups:Tls", warning.Text);
    }

    [Theory]
    [InlineData("Sha256", "abc123", "TopicGroups:Access:Keys:0:Sha256")]
    [InlineData("Tenant", "Team A", "TopicGroups:Access:Keys:0:Tenant")]
    public async Task Start_BadKeyConfiguration_FailsNamingTheSettingWithoutEchoingTheHash(string field, string value, string expected)
    {
        var settings = AccessKeys.Settings(("support", AccessKeys.NewKey()));
        settings[$"TopicGroups:Access:Keys:0:{field}"] = value;

        Exception failure = await Assert.ThrowsAnyAsync<Exception>(async () => await (await LoopbackServer.StartAsync(settings)).DisposeAsync());

        Assert.Contains(expected, failure.ToString());
        if (field == "Sha256")
        {
            Assert.DoesNotContain(value, failure.Message);
        }
    }
}
