using System.Security.Cryptography;
using System.Text;
using Grpc.Core;
using Grpc.Net.Client;
using Microsoft.Extensions.DependencyInjection;
using TopicGroups.Protos.V1;
using TopicGroups.Server;
using TopicGroups.Server.Tests;
using Xunit;

namespace TopicGroups.Client.Tests;

/// <summary>The ApiKey option against a loopback server that requires keys: every call carries it, streamed ones too.</summary>
public sealed class ApiKeyTests
{
    private static readonly string Key = "tgk_" + Convert.ToHexString(RandomNumberGenerator.GetBytes(16)).ToLowerInvariant();

    private static Dictionary<string, string> Settings(string folder) => new()
    {
        ["TopicGroups:Access:Keys:0:Tenant"] = "product",
        ["TopicGroups:Access:Keys:0:Sha256"] = Convert.ToHexString(SHA256.HashData(Encoding.UTF8.GetBytes(Key))),
        ["TopicGroups:Storage:SqlitePath"] = Path.Combine(folder, "groupings.db"),
    };

    [Fact]
    public async Task ApiKey_EveryKindOfCall_AcceptedWithTheKeyRejectedWithout()
    {
        string folder = Directory.CreateTempSubdirectory("topicgroups-client-key-").FullName;
        var (app, address) = await ServerHost.StartInProcessAsync(Settings(folder));
        try
        {
            using var channel = GrpcChannel.ForAddress(address);
            var keyed = new TopicGroupsClient(channel, new TopicGroupsClientOptions { ApiKey = Key, StreamingThresholdBytes = 0 });   // always stream
            var keyless = new TopicGroupsClient(channel, new TopicGroupsClientOptions { MaxRetryAttempts = 0 });
            var (documents, _) = TestBatches.WellSeparated(groupCount: 2, perTheme: 10, dimensions: 8, seed: 2);

            GroupDocumentsResponse grouped = await keyed.GroupDocumentsAsync(documents, new GroupingOptions { GroupCount = 2, SaveAs = "keyed" });
            IReadOnlyList<DocumentPlacement> routed = await keyed.RouteDocumentsAsync("groupings/keyed", documents);
            Grouping fetched = await keyed.GetGroupingAsync("groupings/keyed");
            List<Grouping> listed = await keyed.ListGroupingsAsync().ToListAsync();
            await keyed.DeleteGroupingAsync("groupings/keyed");
            RpcException rejected = await Assert.ThrowsAsync<RpcException>(() => keyless.GroupDocumentsAsync(documents, new GroupingOptions { GroupCount = 2 }));

            Assert.Equal("groupings/keyed", grouped.SavedGroupingName);
            Assert.Equal(20, routed.Count);
            Assert.Equal(2, fetched.GroupCount);
            Assert.Single(listed);
            Assert.Equal(StatusCode.Unauthenticated, rejected.StatusCode);
            Assert.True(await keyless.CheckHealthAsync());   // health needs no key
        }
        finally
        {
            await app.StopAsync();
            await app.DisposeAsync();
            Microsoft.Data.Sqlite.SqliteConnection.ClearAllPools();
            Directory.Delete(folder, recursive: true);
        }
    }

    [Theory]
    [InlineData("")]
    [InlineData(" tgk_padded")]
    [InlineData("tgk_line\nbreak")]
    [InlineData("tgk_naïve")]
    public void ApiKey_NotSendableAsAHeader_ArgumentExceptionWithoutTheKey(string key)
    {
        var exception = Assert.Throws<ArgumentException>(() => new TopicGroupsClient(GrpcChannel.ForAddress("http://localhost:1"), new TopicGroupsClientOptions { ApiKey = key }));

        Assert.Equal("ApiKey", exception.ParamName);
        if (key.Length > 0)
        {
            Assert.DoesNotContain(key.Trim(), exception.Message);
        }
    }

    [Fact]
    public void AddTopicGroupsClient_ApiKeyOption_ReachesTheClient()
    {
        var services = new ServiceCollection();
        services.AddTopicGroupsClient(options =>
        {
            options.Address = new Uri("http://localhost:5231");
            options.ApiKey = "tgk_ a key with spaces";   // unfit: proves the option reaches the client's validation
        });
        using ServiceProvider provider = services.BuildServiceProvider();

        var exception = Assert.Throws<ArgumentException>(() => provider.GetRequiredService<TopicGroupsClient>());

        Assert.Equal("ApiKey", exception.ParamName);
    }
}
