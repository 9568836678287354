using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.DependencyInjection.Extensions;
using Microsoft.Extensions.Options;
using TopicGroups.Protos.V1;

namespace TopicGroups.Client;

public static class ServiceCollectionExtensions
{
    /// <summary>
    /// Registers <see cref="TopicGroupsClient"/> on a channel from the gRPC client factory. Set
    /// <see cref="TopicGroupsClientOptions.Address"/> in <paramref name="configure"/>. The returned builder
    /// configures the HTTP handler (for example a test server's).
    /// </summary>
    public static IHttpClientBuilder AddTopicGroupsClient(
        this IServiceCollection services,
        Action<TopicGroupsClientOptions> configure)
    {
        ArgumentNullException.ThrowIfNull(services);
        ArgumentNullException.ThrowIfNull(configure);
        services.AddOptions<TopicGroupsClientOptions>().Configure(configure);
        IHttpClientBuilder builder = services.AddGrpcClient<TopicGroupsService.TopicGroupsServiceClient>((provider, factory) =>
        {
            TopicGroupsClientOptions options = provider.GetRequiredService<IOptions<TopicGroupsClientOptions>>().Value;
            factory.Address = options.Address ?? throw new InvalidOperationException(
                "TopicGroupsClientOptions.Address is not set; set it in AddTopicGroupsClient, e.g. options.Address = new Uri(\"http://localhost:5231\").");
            factory.ChannelOptionsActions.Add(channel => channel.MaxReceiveMessageSize = options.MaxResponseBytes);
        });
        services.TryAddTransient(provider => new TopicGroupsClient(
            provider.GetRequiredService<TopicGroupsService.TopicGroupsServiceClient>(),
            provider.GetRequiredService<IOptions<TopicGroupsClientOptions>>().Value));
        return builder;
    }
}
