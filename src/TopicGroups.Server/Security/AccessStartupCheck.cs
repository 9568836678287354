using System.Net;
using Microsoft.AspNetCore.Hosting.Server;
using Microsoft.AspNetCore.Hosting.Server.Features;
using Microsoft.Extensions.Options;

namespace TopicGroups.Server.Security;

/// <summary>
/// Once the server listens: one warning when it is reachable from other machines without API keys (anyone who
/// can reach it may read, save and delete groupings), and one when keys would cross the network in clear text.
/// </summary>
internal static class AccessStartupCheck
{
    public static void Register(WebApplication app)
    {
        app.Lifetime.ApplicationStarted.Register(() =>
        {
            ICollection<string> addresses = app.Services.GetRequiredService<IServer>().Features.Get<IServerAddressesFeature>()?.Addresses ?? [];
            ILogger logger = app.Services.GetRequiredService<ILoggerFactory>().CreateLogger(typeof(AccessStartupCheck).FullName!);
            Warn(
                addresses,
                app.Services.GetRequiredService<IOptions<AccessOptions>>().Value.Enabled,
                app.Services.GetRequiredService<IOptions<TlsOptions>>().Value.Enabled,
                logger);
        });
    }

    /// <summary>Logs the warnings that apply to a server on <paramref name="addresses"/>; returns how many.</summary>
    public static int Warn(IEnumerable<string> addresses, bool keysConfigured, bool tlsConfigured, ILogger logger)
    {
        string[] exposed = addresses.Where(address => !IsLoopback(address)).ToArray();
        if (exposed.Length == 0)
        {
            return 0;
        }

        if (!keysConfigured)
        {
            logger.LogWarning(
                "Listening on {Addresses} without API keys: any caller that can reach this address may read, save and delete groupings. "
                + "Configure {Section}:Keys (docs/operations.md, \"Access\").",
                string.Join(", ", exposed),
                AccessOptions.SectionName);
            return 1;
        }

        if (!tlsConfigured)
        {
            logger.LogWarning(
                "Listening on {Addresses} with API keys but without TLS: keys cross the network in clear text unless a proxy or mesh encrypts it. "
                + "Configure {Section}:CertificatePath (docs/operations.md, \"Access\").",
                string.Join(", ", exposed),
                TlsOptions.SectionName);
            return 1;
        }

        return 0;
    }

    private static bool IsLoopback(string address)
    {
        // Kestrel reports e.g. "http://127.0.0.1:5231", "https://[::]:443", "http://localhost:5000" or "http://*:80".
        if (!Uri.TryCreate(address.Replace("://*", "://any", StringComparison.Ordinal).Replace("://+", "://any", StringComparison.Ordinal), UriKind.Absolute, out Uri? uri))
        {
            return false;
        }

        if (uri.IsLoopback)
        {
            return true;
        }

        return IPAddress.TryParse(uri.Host.Trim('[', ']'), out IPAddress? ip) && IPAddress.IsLoopback(ip);
    }
}
