using Microsoft.Extensions.Configuration.Memory;
using Microsoft.Extensions.Options;
using OpenTelemetry.Metrics;
using OpenTelemetry.Resources;

namespace TopicGroups.Server.Services;

/// <summary>
/// What running the server in production needs beside the service itself (docs/operations.md): health, one log event
/// and metrics per call, metric export, graceful shutdown.
/// </summary>
internal static class ServerOperations
{
    /// <summary>The grpc.health.v1 service name that covers liveness only (the grouping check, not the store).</summary>
    public const string LivenessService = "liveness";

    /// <summary>Tag of the health checks that make up liveness.</summary>
    public const string LiveTag = "live";

    /// <summary>The standard OpenTelemetry setting; when it is set, metrics are exported over OTLP.</summary>
    public const string OtlpEndpointKey = "OTEL_EXPORTER_OTLP_ENDPOINT";

    public static void AddServerOperations(this WebApplicationBuilder builder)
    {
        IServiceCollection services = builder.Services;
        IConfiguration configuration = builder.Configuration;

        // Lowest-priority defaults: the per-call event below replaces ASP.NET Core's request and endpoint lines per call.
        // Any configuration source can still raise them again.
        builder.Configuration.Sources.Insert(0, new MemoryConfigurationSource
        {
            InitialData = new Dictionary<string, string?>
            {
                ["Logging:LogLevel:Microsoft.AspNetCore.Hosting.Diagnostics"] = "Warning",
                ["Logging:LogLevel:Microsoft.AspNetCore.Routing.EndpointMiddleware"] = "Warning",
            },
        });

        // Health: "" (readiness) needs every check; "liveness" only the grouping pipeline, so a database outage makes
        // replicas unready without restarting them.
        services.AddGrpcHealthChecks(health =>
            {
                health.Services.Map(string.Empty, _ => true);
                health.Services.Map(LivenessService, check => check.Tags.Contains(LiveTag));
            })
            .AddCheck<GroupingHealthCheck>(GroupingHealthCheck.Name, tags: [LiveTag])
            .AddCheck<StoreHealthCheck>(StoreHealthCheck.Name);

        // One log event and measurements per call; ServerHost puts it first in the interceptor list.
        services.AddSingleton<ServerMetrics>();
        services.AddSingleton<CallTelemetry>();

        // Shutdown: the documented key HostOptions:ShutdownTimeout, and a grace period that fits inside it.
        services.Configure<HostOptions>(configuration.GetSection("HostOptions"));
        services.AddOptions<GracefulShutdownOptions>()
            .BindConfiguration(GracefulShutdownOptions.SectionName)
            .PostConfigure<IOptions<HostOptions>>((shutdown, host) => shutdown.Validate(host.Value.ShutdownTimeout))
            .ValidateOnStart();
        services.AddSingleton<GracefulShutdown>();

        // Metric export: OTLP when the standard endpoint setting is present (environment or configuration). With
        // nothing configured the instruments still exist for in-process listeners and dotnet-counters.
        if (!string.IsNullOrWhiteSpace(configuration[OtlpEndpointKey]))
        {
            services.AddOpenTelemetry()
                .ConfigureResource(resource => resource.AddService("topicgroups-server"))
                .WithMetrics(metrics => metrics
                    .AddMeter(ServerMetrics.MeterName, "Microsoft.AspNetCore.Hosting", "Microsoft.AspNetCore.Server.Kestrel")
                    .AddOtlpExporter());
        }
    }
}
