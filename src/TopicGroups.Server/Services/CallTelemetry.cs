using System.Collections;
using System.Diagnostics;
using Google.Protobuf;
using Google.Protobuf.Reflection;
using Grpc.Core;
using Grpc.Core.Interceptors;
using TopicGroups.Server.Security;

namespace TopicGroups.Server.Services;

/// <summary>
/// One log event and one set of measurements per call: method, status code, duration, documents received, tenant and
/// request id. It reads only those: never texts, embeddings or metadata (the authorization header stays out of logs).
/// Registered first, so it sees every other interceptor's outcome too (an API-key refusal is logged like any call).
/// </summary>
internal sealed partial class CallTelemetry(ServerMetrics metrics, ILogger<CallTelemetry> logger) : Interceptor
{
    private const int MaxLoggedRequestIdLength = 128;

    public override async Task<TResponse> UnaryServerHandler<TRequest, TResponse>(
        TRequest request, ServerCallContext context, UnaryServerMethod<TRequest, TResponse> continuation)
    {
        var call = new CallRecord();
        call.Observe(request);
        try
        {
            TResponse response = await continuation(request, context);
            Finish(call, context, null);
            return response;
        }
        catch (Exception exception)
        {
            Finish(call, context, exception);
            throw;
        }
    }

    public override async Task<TResponse> ClientStreamingServerHandler<TRequest, TResponse>(
        IAsyncStreamReader<TRequest> requestStream, ServerCallContext context, ClientStreamingServerMethod<TRequest, TResponse> continuation)
    {
        var call = new CallRecord();
        try
        {
            TResponse response = await continuation(new ObservedReader<TRequest>(requestStream, call), context);
            Finish(call, context, null);
            return response;
        }
        catch (Exception exception)
        {
            Finish(call, context, exception);
            throw;
        }
    }

    public override async Task ServerStreamingServerHandler<TRequest, TResponse>(
        TRequest request, IServerStreamWriter<TResponse> responseStream, ServerCallContext context, ServerStreamingServerMethod<TRequest, TResponse> continuation)
    {
        var call = new CallRecord();
        call.Observe(request);
        try
        {
            await continuation(request, responseStream, context);
            Finish(call, context, null);
        }
        catch (Exception exception)
        {
            Finish(call, context, exception);
            throw;
        }
    }

    public override async Task DuplexStreamingServerHandler<TRequest, TResponse>(
        IAsyncStreamReader<TRequest> requestStream, IServerStreamWriter<TResponse> responseStream, ServerCallContext context,
        DuplexStreamingServerMethod<TRequest, TResponse> continuation)
    {
        var call = new CallRecord();
        try
        {
            await continuation(new ObservedReader<TRequest>(requestStream, call), responseStream, context);
            Finish(call, context, null);
        }
        catch (Exception exception)
        {
            Finish(call, context, exception);
            throw;
        }
    }

    private void Finish(CallRecord call, ServerCallContext context, Exception? exception)
    {
        TimeSpan duration = Stopwatch.GetElapsedTime(call.StartedAt);
        StatusCode status = exception switch
        {
            null => context.Status.StatusCode,
            RpcException rpc => rpc.StatusCode,
            OperationCanceledException when context.CancellationToken.IsCancellationRequested =>
                GroupingRunner.DeadlineReached(context) ? StatusCode.DeadlineExceeded : StatusCode.Cancelled,
            _ => StatusCode.Unknown,
        };
        (string service, string method) = SplitMethod(context.Method);
        metrics.RecordCall(service, method, status, duration);
        if (CallFacts.RejectionReason(context, status) is string reason)
        {
            metrics.RecordRejection(method, reason);
        }

        LogLevel level = service.StartsWith("grpc.", StringComparison.Ordinal)
            ? LogLevel.Debug   // health probes and reflection: every few seconds, not worth an event each
            : status switch
            {
                StatusCode.Unknown or StatusCode.Internal or StatusCode.DataLoss => LogLevel.Error,
                StatusCode.Unavailable => LogLevel.Warning,
                _ => LogLevel.Information,
            };
        string requestId = call.RequestId is { Length: > MaxLoggedRequestIdLength } longId ? longId[..MaxLoggedRequestIdLength] : call.RequestId ?? "-";
        CallFinished(logger, level, method, status, Math.Round(duration.TotalMilliseconds, 1), call.DocumentCount, CallerTenant.Of(context), requestId);
    }

    /// <summary>"/topicgroups.v1.TopicGroupsService/GroupDocuments" into the service and the method.</summary>
    internal static (string Service, string Method) SplitMethod(string fullMethod)
    {
        string trimmed = fullMethod.TrimStart('/');
        int slash = trimmed.IndexOf('/');
        return slash < 0 ? (string.Empty, trimmed) : (trimmed[..slash], trimmed[(slash + 1)..]);
    }

    [LoggerMessage(
        EventId = 1,
        EventName = "CallFinished",
        Message = "{Method} answered {StatusCode} in {DurationMs} ms; {DocumentCount} documents, tenant {Tenant}, request id {RequestId}")]
    private static partial void CallFinished(
        ILogger logger, LogLevel level, string method, StatusCode statusCode, double durationMs, int documentCount, string tenant, string requestId);

    /// <summary>What the interceptor learns from a call's request messages: their document count and request id.</summary>
    private sealed class CallRecord
    {
        public long StartedAt { get; } = Stopwatch.GetTimestamp();

        public int DocumentCount { get; private set; }

        public string? RequestId { get; private set; }

        // By field name through the message's descriptor, so every request type with a "documents" list or a
        // "request_id" string is covered without this class knowing the types.
        public void Observe(object? message)
        {
            if (message is not IMessage typed)
            {
                return;
            }

            MessageDescriptor descriptor = typed.Descriptor;
            if (descriptor.FindFieldByName("documents") is { IsRepeated: true } documents
                && documents.Accessor.GetValue(typed) is IList list)
            {
                DocumentCount += list.Count;
            }

            if (RequestId is null
                && descriptor.FindFieldByName("request_id") is { FieldType: FieldType.String, IsRepeated: false } requestId
                && requestId.Accessor.GetValue(typed) is string { Length: > 0 } value)
            {
                RequestId = value;
            }
        }
    }

    private sealed class ObservedReader<T>(IAsyncStreamReader<T> inner, CallRecord call) : IAsyncStreamReader<T>
    {
        public T Current => inner.Current;

        public async Task<bool> MoveNext(CancellationToken cancellationToken)
        {
            bool moved = await inner.MoveNext(cancellationToken);
            if (moved)
            {
                call.Observe(inner.Current);
            }

            return moved;
        }
    }
}

/// <summary>Facts a call's handlers leave for <see cref="CallTelemetry"/> in the call's user state.</summary>
internal static class CallFacts
{
    private const string RejectionKey = "topicgroups.rejection";

    /// <summary>Marks why this call is being refused (a <see cref="ServerMetrics.Reasons"/> value).</summary>
    public static void MarkRejection(ServerCallContext context, string reason) => context.UserState[RejectionKey] = reason;

    /// <summary>
    /// The reason marked by a handler, else one read from the status: INVALID_ARGUMENT, FAILED_PRECONDITION,
    /// OUT_OF_RANGE and an unmarked RESOURCE_EXHAUSTED (a request limit) are validation; DEADLINE_EXCEEDED is deadline.
    /// Null for a call that was not refused.
    /// </summary>
    public static string? RejectionReason(ServerCallContext context, StatusCode status)
    {
        if (status == StatusCode.OK)
        {
            return null;
        }

        if (context.UserState.TryGetValue(RejectionKey, out object? marked) && marked is string reason)
        {
            return reason;
        }

        return status switch
        {
            StatusCode.InvalidArgument or StatusCode.FailedPrecondition or StatusCode.OutOfRange or StatusCode.ResourceExhausted =>
                ServerMetrics.Reasons.Validation,
            StatusCode.DeadlineExceeded => ServerMetrics.Reasons.Deadline,
            _ => null,
        };
    }
}
