using System.Diagnostics;
using Google.Protobuf.WellKnownTypes;
using Grpc.Core;
using Microsoft.Extensions.Options;
using TopicGroups.Core.Grouping;
using TopicGroups.Server.Embedding;
using TopicGroups.Server.Mapping;
using TopicGroups.Server.Security;
using TopicGroups.Server.Validation;
using Proto = TopicGroups.Protos.V1;

namespace TopicGroups.Server.Services;

/// <summary>Translates only: proto, then Validation, then Core (off the request thread), then Mapping, then proto.</summary>
internal sealed class TopicGroupsGrpcService(
    GroupingRunner runner,
    SavedGroupings saved,
    IOptions<TopicGroupsLimits> limits,
    TextEmbedding embedding,
    RequestReplay replay,
    BatchArrayPool batchArrays)
    : Proto.TopicGroupsService.TopicGroupsServiceBase
{
    /// <summary>
    /// A streamed batch gets a receiving event for its first chunk, then for the first chunk at least this long after
    /// the last event, and one with the batch's full count after its last chunk. An event per 64 KiB chunk meant a
    /// send and a wake-up of the client's reader each: at 100,000 × 384 the upload took 260-280 ms with them and
    /// 205-230 ms without (medians of 5 interleaved runs of `bench --through-service`). Leaving the events unflushed
    /// (a buffer hint) saved the sends but kept Kestrel's frame writer busy with every one of them.
    /// </summary>
    private static readonly TimeSpan ReceivingEventInterval = TimeSpan.FromMilliseconds(100);

    private readonly TopicGroupsLimits _limits = limits.Value;

    public override Task<Proto.GroupDocumentsResponse> GroupDocuments(Proto.GroupDocumentsRequest request, ServerCallContext context) =>
        replay.RunOnceAsync(RequestReplay.KeyOf(request, context), request.Options, context, once => GroupOnceAsync(request, context, once));

    private async Task<Proto.GroupDocumentsResponse> GroupOnceAsync(Proto.GroupDocumentsRequest request, ServerCallContext context, ReplayRun once)
    {
        // The matrix's array goes back to the pool when this method ends: the grouping has stopped by then (it
        // awaits the computing thread) and the reply is built; a failed or cancelled call ends here too.
        using RequestValidator validator = RequestValidator.ForRequest(request, _limits, embedding, batchArrays);   // INVALID_ARGUMENT / RESOURCE_EXHAUSTED
        GroupingInput input = validator.ToInput();
        TextsToEmbed? texts = validator.TextsToEmbed;
        GroupingPlan plan = await saved.PrepareAsync(CallerTenant.Of(context), request.Options, input, context.CancellationToken);   // reference, save name
        plan = once.Apply(plan);
        GroupingResult result = await runner.RunAsync(plan.Input, progress: null, context, texts);
        Proto.GroupDocumentsResponse response = await saved.CompleteAsync(plan, result, context.CancellationToken);
        if (texts?.Run is EmbeddingRun run)
        {
            EmbeddingStatistics.AddTo(response.Statistics, run);
        }

        return response;
    }

    public override async Task StreamGroupDocuments(
        IAsyncStreamReader<Proto.StreamGroupDocumentsRequest> requestStream,
        IServerStreamWriter<Proto.StreamGroupDocumentsResponse> responseStream,
        ServerCallContext context)
    {
        CancellationToken cancellationToken = context.CancellationToken;
        using var validator = new RequestValidator(_limits, embedding, batchArrays);   // returns the matrix's array when the call ends
        Proto.GroupingOptions? options = null;
        var requestId = new StreamedRequestId(nameof(StreamGroupDocuments));
        long lastEvent = 0;
        int reported = 0;
        await foreach (Proto.StreamGroupDocumentsRequest chunk in requestStream.ReadAllAsync(cancellationToken))
        {
            validator.AddChunk(chunk);
            requestId.Add(chunk);
            options ??= chunk.Options;   // chunk 0's (AddChunk has checked the order)
            if (lastEvent == 0 || Stopwatch.GetElapsedTime(lastEvent) >= ReceivingEventInterval)
            {
                reported = validator.DocumentCount;
                await WriteReceivedAsync(responseStream, reported, cancellationToken);
                lastEvent = Stopwatch.GetTimestamp();
            }
        }

        if (reported != validator.DocumentCount)
        {
            await WriteReceivedAsync(responseStream, validator.DocumentCount, cancellationToken);   // the whole batch is in
        }

        GroupingInput input = validator.ToInput();   // options are present once this returns
        Proto.GroupDocumentsResponse result = await replay.RunOnceAsync(
            requestId.Key(context), options, context, once => GroupStreamedOnceAsync(validator, input, options!, once, responseStream, context));
        validator.Dispose();   // the grouping has stopped and its reply is built: the array can serve the next batch
        await responseStream.WriteAsync(new Proto.StreamGroupDocumentsResponse { Result = result }, cancellationToken);
    }

    private static Task WriteReceivedAsync(
        IServerStreamWriter<Proto.StreamGroupDocumentsResponse> responseStream, int documentsReceived, CancellationToken cancellationToken)
    {
        var received = new Proto.GroupingProgress { Stage = Proto.GroupingStage.Receiving, DocumentsReceived = documentsReceived };
        return responseStream.WriteAsync(new Proto.StreamGroupDocumentsResponse { Progress = received }, cancellationToken);
    }

    private async Task<Proto.GroupDocumentsResponse> GroupStreamedOnceAsync(
        RequestValidator validator,
        GroupingInput input,
        Proto.GroupingOptions options,
        ReplayRun once,
        IServerStreamWriter<Proto.StreamGroupDocumentsResponse> responseStream,
        ServerCallContext context)
    {
        CancellationToken cancellationToken = context.CancellationToken;
        GroupingPlan plan = await saved.PrepareAsync(CallerTenant.Of(context), options, input, cancellationToken);
        plan = once.Apply(plan);
        var relay = new ProgressRelay(responseStream, cancellationToken);
        GroupingResult result;
        try
        {
            result = await runner.RunAsync(plan.Input, relay.Post, context, validator.TextsToEmbed, relay.PostEmbedding);
        }
        finally
        {
            await relay.CompleteAsync();
        }

        var response = new Proto.StreamGroupDocumentsResponse { Result = await saved.CompleteAsync(plan, result, cancellationToken) };
        if (validator.TextsToEmbed?.Run is EmbeddingRun run)
        {
            EmbeddingStatistics.AddTo(response.Result.Statistics, run);
        }

        return response.Result;
    }

    public override Task<Proto.Grouping> GetGrouping(Proto.GetGroupingRequest request, ServerCallContext context) =>
        saved.GetAsync(CallerTenant.Of(context), request, context.CancellationToken);

    public override Task<Proto.ListGroupingsResponse> ListGroupings(Proto.ListGroupingsRequest request, ServerCallContext context) =>
        saved.ListAsync(CallerTenant.Of(context), request, context.CancellationToken);

    public override async Task<Empty> DeleteGrouping(Proto.DeleteGroupingRequest request, ServerCallContext context)
    {
        await saved.DeleteAsync(CallerTenant.Of(context), request, context.CancellationToken);
        return new Empty();
    }

    public override Task<Proto.RouteDocumentsResponse> RouteDocuments(Proto.RouteDocumentsRequest request, ServerCallContext context) =>
        saved.RouteAsync(CallerTenant.Of(context), request, context.CancellationToken);

    public override Task StreamRouteDocuments(
        IAsyncStreamReader<Proto.StreamRouteDocumentsRequest> requestStream,
        IServerStreamWriter<Proto.RouteDocumentsResponse> responseStream,
        ServerCallContext context) =>
        saved.StreamRouteAsync(CallerTenant.Of(context), requestStream, responseStream, context.CancellationToken);
}
