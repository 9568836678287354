using Grpc.Net.Client;
using TopicGroups.Protos.V1;
using TopicGroups.Server;
using TopicGroups.Server.Tests;
using Xunit;

namespace TopicGroups.Client.Tests;

/// <summary>The client over a real loopback socket to the server the CLI starts in its own process.</summary>
public sealed class InProcessServerTests
{
    [Fact]
    public async Task StartInProcessAsync_ClientOverLoopbackHttp2_HealthyAndGroups()
    {
        var (app, address) = await ServerHost.StartInProcessAsync();
        await using (app)
        {
            Assert.True(address.IsLoopback, address.ToString());
            Assert.NotEqual(0, address.Port);
            using var channel = GrpcChannel.ForAddress(address);
            var client = new TopicGroupsClient(channel);

            Assert.True(await client.CheckHealthAsync());
            var (documents, _) = TestBatches.WellSeparated(groupCount: 3, perTheme: 20, dimensions: 16, seed: 5);
            GroupDocumentsResponse response = await client.GroupDocumentsAsync(documents, new GroupingOptions { GroupCount = 3 });

            Assert.Equal([20, 20, 20], response.Groups.Select(g => g.Size));
            await app.StopAsync();
        }
    }
}
