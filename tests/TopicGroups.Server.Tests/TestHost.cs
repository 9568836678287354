using Grpc.Net.Client;
using Microsoft.AspNetCore.Hosting;
using Microsoft.AspNetCore.Mvc.Testing;
using TopicGroups.Protos.V1;

namespace TopicGroups.Server.Tests;

/// <summary>
/// The real server in memory (TestServer) and a real GrpcChannel on its handler: requests go through
/// HTTP/2 framing, protobuf, the gRPC pipeline and the service, as they would over a socket.
/// </summary>
public class TestHost : IDisposable
{
    private readonly WebApplicationFactory<Program> _root;

    public TestHost()
        : this(null)
    {
    }

    protected TestHost(IReadOnlyDictionary<string, string?>? settings)
    {
        _root = new WebApplicationFactory<Program>();
        Factory = _root.WithWebHostBuilder(builder =>
        {
            builder.UseSetting("Logging:LogLevel:Default", "Warning");
            foreach (var (key, value) in settings ?? new Dictionary<string, string?>())
            {
                builder.UseSetting(key, value);
            }
        });
        Channel = GrpcChannel.ForAddress(Factory.Server.BaseAddress, new GrpcChannelOptions
        {
            HttpHandler = Factory.Server.CreateHandler(),
            MaxReceiveMessageSize = null,
        });
        Client = new TopicGroupsService.TopicGroupsServiceClient(Channel);
    }

    public WebApplicationFactory<Program> Factory { get; }

    public GrpcChannel Channel { get; }

    public TopicGroupsService.TopicGroupsServiceClient Client { get; }

    public void Dispose()
    {
        Channel.Dispose();
        Factory.Dispose();
        _root.Dispose();
    }
}
