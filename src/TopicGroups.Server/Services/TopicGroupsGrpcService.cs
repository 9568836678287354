using Grpc.Core;
using Microsoft.Extensions.Options;
using TopicGroups.Core.Grouping;
using TopicGroups.Server.Mapping;
using TopicGroups.Server.Validation;
using Proto = TopicGroups.Protos.V1;

namespace TopicGroups.Server.Services;

/// <summary>Translates only: proto, then Validation, then Core (off the request thread), then Mapping, then proto.</summary>
internal sealed class TopicGroupsGrpcService(GroupingRunner runner, IOptions<TopicGroupsLimits> limits)
    : Proto.TopicGroupsService.TopicGroupsServiceBase
{
    private readonly TopicGroupsLimits _limits = limits.Value;

    public override async Task<Proto.GroupDocumentsResponse> GroupDocuments(
        Proto.GroupDocumentsRequest request,
        ServerCallContext context)
    {
        GroupingInput input = RequestValidator.ToInput(request, _limits);   // INVALID_ARGUMENT / RESOURCE_EXHAUSTED
        GroupingResult result = await runner.RunAsync(input, progress: null, context);
        return ResponseMapper.ToProto(result);
    }

    public override async Task StreamGroupDocuments(
        IAsyncStreamReader<Proto.StreamGroupDocumentsRequest> requestStream,
        IServerStreamWriter<Proto.StreamGroupDocumentsResponse> responseStream,
        ServerCallContext context)
    {
        CancellationToken cancellationToken = context.CancellationToken;
        var validator = new RequestValidator(_limits);
        await foreach (Proto.StreamGroupDocumentsRequest chunk in requestStream.ReadAllAsync(cancellationToken))
        {
            validator.AddChunk(chunk);
            var received = new Proto.GroupingProgress
            {
                Stage = Proto.GroupingStage.Receiving,
                DocumentsReceived = validator.DocumentCount,
            };
            await responseStream.WriteAsync(new Proto.StreamGroupDocumentsResponse { Progress = received }, cancellationToken);
        }

        GroupingInput input = validator.ToInput();
        var relay = new ProgressRelay(responseStream, cancellationToken);
        GroupingResult result;
        try
        {
            result = await runner.RunAsync(input, relay.Post, context);
        }
        finally
        {
            await relay.CompleteAsync();
        }

        var response = new Proto.StreamGroupDocumentsResponse { Result = ResponseMapper.ToProto(result) };
        await responseStream.WriteAsync(response, cancellationToken);
    }
}
