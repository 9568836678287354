using Microsoft.AspNetCore.Server.Kestrel.Core;

namespace TopicGroups.Server.Security;

/// <summary>Wires API keys, tenants and TLS into the host (called from ServerHost).</summary>
internal static class AccessConfiguration
{
    public static void AddAccess(this IServiceCollection services)
    {
        services.AddOptions<AccessOptions>()
            .BindConfiguration(AccessOptions.SectionName)
            .PostConfigure(access => access.Validate())
            .ValidateOnStart();
        services.AddOptions<TlsOptions>().BindConfiguration(TlsOptions.SectionName);

        // One instance for the server's life (gRPC takes registered interceptors from DI): the key table is built once.
        // ServerHost puts it in the interceptor list.
        services.AddSingleton<ApiKeyInterceptor>();
    }

    /// <summary>Turns on TLS for <paramref name="listen"/> when TopicGroups:Tls:CertificatePath is set.</summary>
    public static void UseConfiguredTls(this ListenOptions listen, IConfiguration configuration)
    {
        TlsOptions tls = configuration.GetSection(TlsOptions.SectionName).Get<TlsOptions>() ?? new TlsOptions();
        if (tls.Enabled)
        {
            listen.UseHttps(tls.LoadCertificate());
        }
    }
}
