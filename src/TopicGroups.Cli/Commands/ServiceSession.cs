using Grpc.Net.Client;
using Microsoft.AspNetCore.Builder;
using TopicGroups.Client;
using TopicGroups.Server;
using TopicGroups.Server.Storage;

namespace TopicGroups.Cli.Commands;

/// <summary>
/// A client on the service: a server at an address, or one started in this process on a free loopback port
/// whose saved groupings live in <see cref="StorePath"/>. Disposing stops the in-process server.
/// </summary>
internal sealed class ServiceSession : IAsyncDisposable
{
    /// <summary>Results for very large batches exceed gRPC's default 4 MB receive limit.</summary>
    private const int MaxReceiveMessageBytes = 256 * 1024 * 1024;

    private readonly WebApplication? _inProcess;
    private readonly GrpcChannel _channel;

    private ServiceSession(Uri address, WebApplication? inProcess, string? storePath)
    {
        Address = address;
        _inProcess = inProcess;
        StorePath = storePath;
        _channel = GrpcChannel.ForAddress(address, new GrpcChannelOptions { MaxReceiveMessageSize = MaxReceiveMessageBytes });
        Client = new TopicGroupsClient(_channel, ApiKeyVariable.ClientOptions(remote: inProcess is null));
    }

    public Uri Address { get; }

    /// <summary>Null for a remote server (its store is its own business).</summary>
    public string? StorePath { get; }

    public TopicGroupsClient Client { get; }

    /// <summary>What error messages call the service: "server URL" or "in-process server (store PATH)".</summary>
    public string Description => StorePath is null ? $"server {Address}" : $"in-process server (store {StorePath})";

    /// <summary>The per-user store of the in-process server (see docs/saved-groupings.md).</summary>
    public static string DefaultStorePath => GroupingStoreOptions.DefaultSqlitePath;

    /// <summary>Connects to <paramref name="server"/>, or starts the service here on <paramref name="storePath"/> (default: the per-user store).</summary>
    public static async Task<ServiceSession> OpenAsync(Uri? server, string? storePath, CancellationToken cancellationToken)
    {
        if (server is not null)
        {
            return new ServiceSession(server, null, null);
        }

        string path = Path.GetFullPath(storePath ?? DefaultStorePath);
        (WebApplication app, Uri address) = await ServerHost.StartInProcessAsync(
            new Dictionary<string, string> { ["TopicGroups:Storage:SqlitePath"] = path }, cancellationToken);
        return new ServiceSession(address, app, path);
    }

    public async ValueTask DisposeAsync()
    {
        _channel.Dispose();
        if (_inProcess is not null)
        {
            await _inProcess.StopAsync(CancellationToken.None);
            await _inProcess.DisposeAsync();
        }
    }
}
