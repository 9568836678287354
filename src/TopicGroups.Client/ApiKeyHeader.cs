using Grpc.Core;
using Grpc.Core.Interceptors;
using TopicGroups.Protos.V1;

namespace TopicGroups.Client;

/// <summary>Adds "authorization: Bearer KEY" to every call when an API key is set (the server's Access check).</summary>
internal static class ApiKeyHeader
{
    public const string Name = "authorization";

    /// <summary>The generated client itself without a key; with one, a client whose every call carries it.</summary>
    public static TopicGroupsService.TopicGroupsServiceClient Attach(TopicGroupsService.TopicGroupsServiceClient client, string? apiKey)
    {
        if (apiKey is null)
        {
            return client;
        }

        string value = "Bearer " + apiKey;
        CallInvoker invoker = client.SharedCallInvoker.Intercept(headers =>
        {
            // A fresh copy: a caller (or a retry) may pass the same headers object again, and it must not grow.
            var withKey = new Metadata();
            foreach (Metadata.Entry entry in headers)
            {
                if (!string.Equals(entry.Key, Name, StringComparison.OrdinalIgnoreCase))
                {
                    withKey.Add(entry);
                }
            }

            withKey.Add(Name, value);
            return withKey;
        });
        return new TopicGroupsService.TopicGroupsServiceClient(invoker);
    }

    /// <summary>Null when the key is fit to send; otherwise why not (without the key itself).</summary>
    public static string? Problem(string apiKey)
    {
        if (apiKey.Length == 0 || apiKey.Trim().Length != apiKey.Length)
        {
            return "ApiKey is empty or starts or ends with white space; set it to the key exactly, or to null for a server without keys.";
        }

        // gRPC metadata values must be printable ASCII (HTTP/2 header rules).
        return apiKey.Any(c => c < 0x21 || c > 0x7E)
            ? "ApiKey holds a character outside printable ASCII (space, control or non-ASCII); keys are sent as an HTTP/2 header, so use printable ASCII only."
            : null;
    }
}
