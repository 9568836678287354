using Microsoft.AspNetCore.Http.Features;
using Microsoft.Extensions.Options;
using Microsoft.Extensions.Primitives;

namespace TopicGroups.Server.Validation;

/// <summary>
/// gRPC refuses a message over MaxReceiveMessageSize before any handler runs, with a generic text. This
/// middleware replaces that text with one that states this server's limit and the way around it.
/// </summary>
internal static class ReceiveLimitMessage
{
    // grpc-dotnet's text for the refusal (status RESOURCE_EXHAUSTED); matched so that no other error is touched.
    private const string GrpcText = "Received message exceeds the maximum configured message size.";
    private const string ResourceExhausted = "8";

    public static IApplicationBuilder UseReceiveLimitMessage(this IApplicationBuilder app) =>
        app.Use(async (context, next) =>
        {
            await next(context);
            int limit = context.RequestServices.GetRequiredService<IOptions<TopicGroupsLimits>>().Value.MaxMessageBytes;
            string text = $"The request message is larger than this server accepts ({limit} bytes, TopicGroups:Limits:MaxMessageBytes). "
                + "Send large batches through StreamGroupDocuments in chunks under 1 MB; the TopicGroups client does this by itself.";

            // A refusal before any message is written goes out as headers only ("trailers-only"); otherwise in trailers.
            if (!context.Response.HasStarted)
            {
                Rewrite(context.Response.Headers, text);
            }

            IHeaderDictionary? trailers = context.Features.Get<IHttpResponseTrailersFeature>()?.Trailers;
            if (trailers is { IsReadOnly: false })
            {
                Rewrite(trailers, text);
            }
        });

    private static void Rewrite(IHeaderDictionary headers, string text)
    {
        if (headers.TryGetValue("grpc-status", out StringValues status) && status == ResourceExhausted
            && headers.TryGetValue("grpc-message", out StringValues message) && message == GrpcText)
        {
            headers["grpc-message"] = Uri.EscapeDataString(text);
        }
    }
}
