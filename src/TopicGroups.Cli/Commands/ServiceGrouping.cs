using Grpc.Net.Client;
using Microsoft.AspNetCore.Builder;
using TopicGroups.Client;
using TopicGroups.Protos.V1;
using TopicGroups.Server;

namespace TopicGroups.Cli.Commands;

/// <summary>
/// The real <see cref="GroupingCall"/>: a <see cref="TopicGroupsClient"/> over a real gRPC channel.
/// Without a server address it starts the service in this process on a free loopback port and
/// talks to it exactly as it would to a remote one, then stops it.
/// </summary>
internal static class ServiceGrouping
{
    /// <summary>Results for very large batches exceed gRPC's default 4 MB receive limit.</summary>
    private const int MaxReceiveMessageBytes = 256 * 1024 * 1024;

    public static async Task<GroupDocumentsResponse> RunAsync(
        Uri? server,
        IReadOnlyList<Document> documents,
        GroupingOptions options,
        IProgress<GroupingProgress>? progress,
        CancellationToken cancellationToken)
    {
        WebApplication? inProcess = null;
        Uri address;
        if (server is null)
        {
            (inProcess, address) = await ServerHost.StartInProcessAsync(cancellationToken);
        }
        else
        {
            address = server;
        }

        try
        {
            using var channel = GrpcChannel.ForAddress(address, new GrpcChannelOptions { MaxReceiveMessageSize = MaxReceiveMessageBytes });
            var client = new TopicGroupsClient(channel, ApiKeyVariable.ClientOptions(remote: server is not null));
            return await client.GroupDocumentsAsync(documents, options, progress, cancellationToken);
        }
        finally
        {
            if (inProcess is not null)
            {
                await inProcess.StopAsync(CancellationToken.None);
                await inProcess.DisposeAsync();
            }
        }
    }
}
