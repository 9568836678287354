using System.Net;
using Grpc.AspNetCore.Server;
using Microsoft.AspNetCore.Connections;
using Microsoft.AspNetCore.Server.Kestrel.Core;
using Microsoft.Extensions.Options;
using TopicGroups.Core.Grouping;
using Microsoft.Extensions.DependencyInjection.Extensions;
using TopicGroups.Server.Embedding;
using TopicGroups.Server.Security;
using TopicGroups.Server.Services;
using TopicGroups.Server.Storage;
using TopicGroups.Server.Validation;

namespace TopicGroups.Server;

/// <summary>Builds the gRPC host; used by Program (stand-alone server) and by the CLI (in-process server).</summary>
public static class ServerHost
{
    /// <summary>Default port of the stand-alone server (configuration key TopicGroups:Port).</summary>
    public const int DefaultPort = 5231;

    /// <summary>HTTP/2 receive window per request stream: 4 MiB.</summary>
    internal const int Http2StreamWindowBytes = 4 * 1024 * 1024;

    /// <summary>HTTP/2 receive window per connection, shared by its streams: 8 MiB.</summary>
    internal const int Http2ConnectionWindowBytes = 8 * 1024 * 1024;

    /// <summary>
    /// Builds the application. port 0 asks the OS for a free port; null reads TopicGroups:Port
    /// (default 5231). Binds to loopback unless TopicGroups:ListenAnyAddress is true.
    /// </summary>
    public static WebApplication Build(string[] args, int? port = null)
    {
        var builder = WebApplication.CreateBuilder(args);
        int chosenPort = port ?? builder.Configuration.GetValue("TopicGroups:Port", DefaultPort);
        bool listenAnyAddress = builder.Configuration.GetValue("TopicGroups:ListenAnyAddress", false);
        builder.WebHost.ConfigureKestrel(kestrel =>
        {
            // HTTP/2 only (gRPC needs it; Kestrel's default would be HTTP/1.1): cleartext, or TLS when a certificate is configured.
            IPAddress address = listenAnyAddress ? IPAddress.Any : IPAddress.Loopback;
            kestrel.Listen(address, chosenPort, listen =>
            {
                listen.Protocols = HttpProtocols.Http2;
                listen.UseConfiguredTls(builder.Configuration);   // TopicGroups:Tls (docs/operations.md, "Access")
            });

            // Upload flow-control windows of many stream chunks (64 KiB by default), so a client keeps sending while the server
            // copies the previous chunk (Kestrel's defaults: 768 KiB per stream, 1 MiB per connection; docs/performance.md).
            kestrel.Limits.Http2.InitialStreamWindowSize = Http2StreamWindowBytes;
            kestrel.Limits.Http2.InitialConnectionWindowSize = Http2ConnectionWindowBytes;
        });
        // Socket buffers of 64 KiB, not 4 KiB: a large upload then takes a few thousand receive calls, not tens of thousands.
        builder.Services.AddSingleton<IMemoryPoolFactory<byte>, ReceiveBlockPoolFactory>();
        ConfigureServices(builder);
        var app = builder.Build();
        MapEndpoints(app);
        return app;
    }

    /// <summary>Starts a server on a free loopback port and returns it with its address.</summary>
    public static Task<(WebApplication App, Uri Address)> StartInProcessAsync(CancellationToken cancellationToken = default) =>
        StartInProcessAsync(new Dictionary<string, string>(), cancellationToken);

    /// <summary>The same, with configuration settings, e.g. ["TopicGroups:Storage:SqlitePath"] = a file of the caller's.</summary>
    public static async Task<(WebApplication App, Uri Address)> StartInProcessAsync(
        IReadOnlyDictionary<string, string> settings, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(settings);
        string[] args = ["--Logging:LogLevel:Default=Warning", .. settings.Select(setting => $"--{setting.Key}={setting.Value}")];
        var app = Build(args, port: 0);
        await app.StartAsync(cancellationToken);
        string address = app.Urls.First();
        return (app, new Uri(address));
    }

    internal static void ConfigureServices(WebApplicationBuilder builder)
    {
        IServiceCollection services = builder.Services;
        services.AddOptions<TopicGroupsLimits>()
            .BindConfiguration(TopicGroupsLimits.SectionName)
            .PostConfigure(limits => limits.Validate())
            .ValidateOnStart();

        // Interceptors in call order: the per-call log event and metrics first, so they also see the API-key check's
        // refusals; then the key check, before everything that relies on the caller's tenant (the telemetry reads
        // the tenant only after the call).
        services.AddGrpc(grpc =>
        {
            grpc.Interceptors.Add<CallTelemetry>();
            grpc.Interceptors.Add<ApiKeyInterceptor>();
        });
        services.AddParseCheckedMethods();   // INVALID_ARGUMENT for requests the protobuf parser refuses (Validation/)
        services.AddAccess();   // API keys, tenants, TLS options (Security/)

        // Read through options (not at build time) so test hosts and later configuration sources apply.
        services.AddOptions<GrpcServiceOptions>()
            .Configure<IOptions<TopicGroupsLimits>>((grpc, limits) => grpc.MaxReceiveMessageSize = limits.Value.MaxMessageBytes);
        builder.AddServerOperations();   // health (pipeline and store), per-call logs and metrics, shutdown
        services.AddGrpcReflection();
        services.AddMetrics();

        services.AddSingleton<GroupingPipeline>();
        services.AddOptions<GroupingAdmissionOptions>()
            .BindConfiguration(GroupingAdmissionOptions.SectionName)
            .PostConfigure(admission => admission.Validate())
            .ValidateOnStart();
        services.AddSingleton<GroupingAdmission>();
        services.AddSingleton(provider =>
            new BatchArrayPool(provider.GetRequiredService<IOptions<GroupingAdmissionOptions>>().Value.EffectiveKeptBatchArrayBytes));
        services.AddSingleton<GroupingRunner>();
        services.AddOptions<TextEmbeddingOptions>()
            .BindConfiguration(TextEmbeddingOptions.SectionName)
            .PostConfigure(embedding => embedding.Validate())
            .ValidateOnStart();
        services.AddSingleton<TextEmbedding>();

        // Saved groupings: PostgreSQL when a connection string is configured, else SQLite (docs/saved-groupings.md).
        services.AddOptions<GroupingStoreOptions>().BindConfiguration(GroupingStoreOptions.SectionName);
        services.AddSingleton<IGroupingStore>(provider =>
        {
            GroupingStoreOptions storage = provider.GetRequiredService<IOptions<GroupingStoreOptions>>().Value;
            return string.IsNullOrWhiteSpace(storage.PostgresConnectionString)
                ? new SqliteGroupingStore(storage.ResolvedSqlitePath)
                : new PostgresGroupingStore(storage.PostgresConnectionString);
        });
        services.TryAddSingleton(TimeProvider.System);
        services.AddSingleton<SavedGroupings>();

        // Request ids: a retried grouping call runs and saves once (docs/retries.md).
        services.AddOptions<RequestReplayOptions>()
            .BindConfiguration(RequestReplayOptions.SectionName)
            .PostConfigure(replay => replay.Validate())
            .ValidateOnStart();
        services.AddSingleton<RequestReplay>();
    }

    internal static void MapEndpoints(WebApplication app)
    {
        app.UseReceiveLimitMessage();
        AccessStartupCheck.Register(app);
        app.MapGrpcService<TopicGroupsGrpcService>().PreferParseCheckedMethods();
        app.MapGrpcHealthChecksService();
        app.MapGrpcReflectionService();
    }
}
