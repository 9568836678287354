using System.Security.Cryptography;
using System.Text;
using Grpc.Core;
using Grpc.Core.Interceptors;
using Microsoft.Extensions.Options;

namespace TopicGroups.Server.Security;

/// <summary>
/// Checks the API key on every call to the service and records the key's tenant for the call
/// (<see cref="CallerTenant"/>). Health and reflection stay open so probes and tools need no key.
/// With no keys configured it lets every call through as the default tenant.
/// The key is never logged or echoed: log lines name the method, the tenant and the key's label only.
/// </summary>
internal sealed class ApiKeyInterceptor : Interceptor
{
    /// <summary>The metadata header that carries the key, as "Bearer KEY" (gRPC metadata keys are lower case).</summary>
    public const string HeaderName = "authorization";

    public const string Scheme = "Bearer";

    // Services any caller may use: gRPC health (probes) and reflection (grpcurl and similar tools).
    private static readonly string[] OpenServicePrefixes =
    [
        "/grpc.health.v1.Health/",
        "/grpc.reflection.v1.ServerReflection/",
        "/grpc.reflection.v1alpha.ServerReflection/",
    ];

    private readonly (byte[] Hash, string Tenant, string Label)[] _keys;
    private readonly ILogger<ApiKeyInterceptor> _logger;

    public ApiKeyInterceptor(IOptions<AccessOptions> options, ILogger<ApiKeyInterceptor> logger)
    {
        _logger = logger;
        _keys = options.Value.Keys
            .Select((key, index) => (Convert.FromHexString(key.Sha256), key.Tenant, key.Label ?? $"{AccessOptions.SectionName}:Keys:{index}"))
            .ToArray();
    }

    public override Task<TResponse> UnaryServerHandler<TRequest, TResponse>(
        TRequest request, ServerCallContext context, UnaryServerMethod<TRequest, TResponse> continuation)
    {
        Admit(context);
        return continuation(request, context);
    }

    public override Task<TResponse> ClientStreamingServerHandler<TRequest, TResponse>(
        IAsyncStreamReader<TRequest> requestStream, ServerCallContext context, ClientStreamingServerMethod<TRequest, TResponse> continuation)
    {
        Admit(context);
        return continuation(requestStream, context);
    }

    public override Task ServerStreamingServerHandler<TRequest, TResponse>(
        TRequest request, IServerStreamWriter<TResponse> responseStream, ServerCallContext context, ServerStreamingServerMethod<TRequest, TResponse> continuation)
    {
        Admit(context);
        return continuation(request, responseStream, context);
    }

    public override Task DuplexStreamingServerHandler<TRequest, TResponse>(
        IAsyncStreamReader<TRequest> requestStream, IServerStreamWriter<TResponse> responseStream, ServerCallContext context,
        DuplexStreamingServerMethod<TRequest, TResponse> continuation)
    {
        Admit(context);
        return continuation(requestStream, responseStream, context);
    }

    /// <summary>Sets the caller's tenant, or throws UNAUTHENTICATED.</summary>
    private void Admit(ServerCallContext context)
    {
        if (_keys.Length == 0 || OpenServicePrefixes.Any(prefix => context.Method.StartsWith(prefix, StringComparison.Ordinal)))
        {
            return;
        }

        string? header = context.RequestHeaders.GetValue(HeaderName);
        if (header is null)
        {
            throw Reject(context, "no key", $"This server requires an API key: send the metadata header \"{HeaderName}: {Scheme} <key>\" on every call.");
        }

        if (!header.StartsWith(Scheme + " ", StringComparison.OrdinalIgnoreCase) || header.Length <= Scheme.Length + 1)
        {
            throw Reject(context, "malformed header", $"The \"{HeaderName}\" header must read \"{Scheme} <key>\"; send the key after the word {Scheme} and one space.");
        }

        // Compare hashes, not keys: configuration holds only hashes. Every entry is compared in fixed time so the
        // answer's timing says nothing about which stored hash came close.
        byte[] presented = SHA256.HashData(Encoding.UTF8.GetBytes(header.AsSpan(Scheme.Length + 1).Trim().ToString()));
        int match = -1;
        for (int i = 0; i < _keys.Length; i++)
        {
            if (CryptographicOperations.FixedTimeEquals(presented, _keys[i].Hash))
            {
                match = i;
            }
        }

        if (match < 0)
        {
            throw Reject(context, "unknown key", $"The API key in the \"{HeaderName}\" header is not one this server accepts; check the key, or ask the server's operator for one.");
        }

        CallerTenant.Set(context, _keys[match].Tenant);
        _logger.LogDebug("Call {Method} admitted for tenant {Tenant} with key {KeyLabel}", context.Method, _keys[match].Tenant, _keys[match].Label);
    }

    private RpcException Reject(ServerCallContext context, string reason, string message)
    {
        _logger.LogInformation("Call {Method} from {Peer} rejected: {Reason}", context.Method, context.Peer, reason);
        return new RpcException(new Status(StatusCode.Unauthenticated, message));
    }
}
