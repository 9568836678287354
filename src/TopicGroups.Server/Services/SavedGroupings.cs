using System.Data.Common;
using Grpc.Core;
using Microsoft.Extensions.Options;
using TopicGroups.Core.Grouping;
using TopicGroups.Core.Vectors;
using TopicGroups.Server.Mapping;
using TopicGroups.Server.Storage;
using TopicGroups.Server.Validation;
using Proto = TopicGroups.Protos.V1;

namespace TopicGroups.Server.Services;

/// <summary>What a grouping request asks beyond the grouping itself: a reference to continue, a name to save under.</summary>
/// <param name="Input">The batch; with a warm start, its options carry the reference's centres.</param>
/// <param name="Tenant">The caller's tenant: the reference came from it and the save goes to it.</param>
internal sealed record GroupingPlan(
    string Tenant,
    GroupingInput Input,
    SavedGrouping? Reference,
    double MinimumMatchSimilarity,
    bool WarmStart,
    string? SaveId,
    bool Replace)
{
    /// <summary>The call's request id, recorded with the saved grouping (see RequestReplay).</summary>
    public SavedRequest? Request { get; init; }

    /// <summary>SaveId was made by the server (options.save without save_as), so another may be drawn on a collision.</summary>
    public bool ServerMadeName { get; init; }

    /// <summary>options.packed_placements: the reply carries the placements as columns (packed_documents).</summary>
    public bool PackedPlacements { get; init; }
}

/// <summary>
/// The saved-grouping steps of the service: checks names and options, loads references, applies continuity,
/// saves, routes, gets, lists and deletes. Store failures become UNAVAILABLE; unknown names NOT_FOUND.
/// Every step acts within the caller's tenant only; another tenant's grouping answers exactly like a missing one.
/// </summary>
internal sealed class SavedGroupings(IGroupingStore store, TimeProvider time, IOptions<TopicGroupsLimits> limits, ILogger<SavedGroupings> logger)
{
    public const int DefaultPageSize = 50;
    public const int MaxPageSize = 1000;

    /// <summary>Names drawn for one save (options.save without save_as) before a collision is reported.</summary>
    private const int MadeNameAttempts = 8;

    private readonly TopicGroupsLimits _limits = limits.Value;

    /// <summary>Checks the save and reference options and loads the reference, before any computing starts.</summary>
    public async Task<GroupingPlan> PrepareAsync(string tenant, Proto.GroupingOptions options, GroupingInput input, CancellationToken cancellationToken)
    {
        string? saveId = null;
        if (options.SaveAs.Length > 0)
        {
            saveId = GroupingNames.CheckId(options.SaveAs, "options.save_as");
        }
        else if (options.ReplaceSaved)
        {
            throw StatusErrors.InvalidArgument("options.replace_saved", "is set but options.save_as is empty; name the saved grouping to replace.");
        }
        else if (options.Save)
        {
            saveId = GroupingNames.MakeId(time.GetUtcNow());
        }

        bool hasReference = options.Reference.Length > 0;
        if (!hasReference && options.WarmStart)
        {
            throw StatusErrors.InvalidArgument("options.warm_start", "is set but options.reference is empty; name the saved grouping whose centres to start from.");
        }

        if (!hasReference && options.MinMatchSimilarity != 0)
        {
            throw StatusErrors.InvalidArgument("options.min_match_similarity", "is set but options.reference is empty; it only applies when continuing a saved grouping.");
        }

        double minimum = options.MinMatchSimilarity == 0 ? ContinuityDefaults.MinimumMatchSimilarity : options.MinMatchSimilarity;
        if (!(minimum > 0 && minimum <= 1))
        {
            throw StatusErrors.InvalidArgument(
                "options.min_match_similarity",
                $"is {options.MinMatchSimilarity}; use a centre cosine above 0 and at most 1, or 0 for the server default ({ContinuityDefaults.MinimumMatchSimilarity}).");
        }

        SavedGrouping? reference = null;
        if (hasReference)
        {
            string referenceId = GroupingNames.ParseName(options.Reference, "options.reference");
            reference = await LoadAsync(tenant, referenceId, cancellationToken);
            int d = input.Embeddings.Dimensions;
            if (reference.Snapshot.Dimensions != d)
            {
                throw StatusErrors.InvalidArgument(
                    "options.reference",
                    $"names a grouping made from {reference.Snapshot.Dimensions}-dimensional embeddings, but this batch's have {d}; "
                    + "continue a grouping made with the same embedding model.");
            }

            if (options.WarmStart)
            {
                int referenceCount = reference.Snapshot.Groups.Count;
                int asked = input.Options.GroupCount;
                if (asked != 0 && asked != referenceCount)
                {
                    throw StatusErrors.InvalidArgument(
                        "options.warm_start",
                        $"starts from the reference's {referenceCount} centres, but options.group_count is {asked}; "
                        + $"set group_count to {referenceCount} (or 0 to take the reference's count), or turn warm_start off.");
                }

                if (referenceCount > input.Embeddings.Rows)
                {
                    throw StatusErrors.InvalidArgument(
                        "options.warm_start",
                        $"needs at least {referenceCount} documents (the reference's group count); the batch has {input.Embeddings.Rows}.");
                }

                input = new GroupingInput(input.Ids, input.Texts, input.Embeddings, input.Options with
                {
                    GroupCount = referenceCount,
                    InitialCentroids = reference.Snapshot.Centroids,
                });
            }
        }

        // Fail before computing when the name is taken; the save itself checks again (another call may be quicker).
        // A made-up name is not checked here: the save draws another one if it collides.
        if (saveId is not null && options.SaveAs.Length > 0 && !options.ReplaceSaved && await StoreAsync(() => store.ExistsAsync(tenant, saveId, cancellationToken)))
        {
            throw AlreadyExists(saveId);
        }

        return new GroupingPlan(tenant, input, reference, minimum, options.WarmStart, saveId, options.ReplaceSaved)
        {
            ServerMadeName = saveId is not null && options.SaveAs.Length == 0,
            PackedPlacements = options.PackedPlacements,
        };
    }

    /// <summary>Applies continuity when a reference was named, saves when asked, and builds the reply.</summary>
    public async Task<Proto.GroupDocumentsResponse> CompleteAsync(GroupingPlan plan, GroupingResult result, CancellationToken cancellationToken)
    {
        ContinuityResult? continued = plan.Reference is null
            ? null
            : Continuity.Apply(result, plan.Reference.Snapshot, plan.MinimumMatchSimilarity);
        GroupingResult final = continued?.Result ?? result;
        Proto.GroupDocumentsResponse response = ResponseMapper.ToProto(final, plan.PackedPlacements);
        if (continued is not null)
        {
            response.Changes = SavedGroupingMapper.ToProto(continued.Changes, GroupingNames.NameOf(plan.Reference!.Id), plan.WarmStart);
        }

        if (plan.SaveId is string id)
        {
            GroupingSnapshot snapshot = GroupingSnapshot.Capture(final, plan.Input.Options, continued?.HighestGroupId ?? 0);
            var options = plan.Input.Options with { GroupCount = final.Groups.Count, InitialCentroids = null };
            var saved = new SavedGrouping(id, time.GetUtcNow(), snapshot, options) { Request = plan.Request };
            for (int attempt = 1; ; attempt++)
            {
                try
                {
                    await StoreAsync(async () =>
                    {
                        await store.SaveAsync(plan.Tenant, saved, plan.Replace, cancellationToken);
                        return true;
                    });
                    break;
                }
                catch (GroupingExistsException) when (plan.ServerMadeName && attempt < MadeNameAttempts)
                {
                    // Two saves in one second drew the same made-up name (seen under load): draw another.
                    id = GroupingNames.MakeId(time.GetUtcNow());
                    saved = saved with { Id = id };
                }
                catch (GroupingExistsException)
                {
                    throw AlreadyExists(id);
                }
                catch (RequestAlreadySavedException earlier)
                {
                    id = earlier.Id;   // a retry of this request saved it first; name that grouping, save nothing more
                    break;
                }
            }

            response.SavedGroupingName = GroupingNames.NameOf(id);
        }

        return response;
    }

    public async Task<Proto.Grouping> GetAsync(string tenant, Proto.GetGroupingRequest request, CancellationToken cancellationToken)
    {
        string id = GroupingNames.ParseName(request.Name, "name");
        SavedGrouping grouping = await LoadAsync(tenant, id, cancellationToken);
        return SavedGroupingMapper.ToProto(grouping, request.View);
    }

    public async Task<Proto.ListGroupingsResponse> ListAsync(string tenant, Proto.ListGroupingsRequest request, CancellationToken cancellationToken)
    {
        if (request.PageSize < 0 || request.PageSize > MaxPageSize)
        {
            throw StatusErrors.InvalidArgument(
                "page_size", $"is {request.PageSize}; ask for 1 to {MaxPageSize} groupings per page, or 0 for the default ({DefaultPageSize}).");
        }

        GroupingPageToken? after = SavedGroupingMapper.FromPageToken(request.PageToken);
        int pageSize = request.PageSize == 0 ? DefaultPageSize : request.PageSize;
        GroupingPage page = await StoreAsync(() => store.ListAsync(tenant, pageSize, after, cancellationToken));
        var response = new Proto.ListGroupingsResponse
        {
            NextPageToken = page.Next is GroupingPageToken next ? SavedGroupingMapper.ToPageToken(next) : string.Empty,
        };
        response.Groupings.AddRange(page.Groupings.Select(SavedGroupingMapper.ToProto));
        return response;
    }

    public async Task DeleteAsync(string tenant, Proto.DeleteGroupingRequest request, CancellationToken cancellationToken)
    {
        string id = GroupingNames.ParseName(request.Name, "name");
        if (!await StoreAsync(() => store.DeleteAsync(tenant, id, cancellationToken)))
        {
            throw NotFound(id);
        }
    }

    public async Task<Proto.RouteDocumentsResponse> RouteAsync(string tenant, Proto.RouteDocumentsRequest request, CancellationToken cancellationToken)
    {
        string id = GroupingNames.ParseName(request.Grouping, "grouping");
        if (request.Documents.Count == 0)
        {
            throw StatusErrors.InvalidArgument("documents", "is empty; send at least one document (an id and an embedding) to route.");
        }

        SavedGrouping grouping = await LoadAsync(tenant, id, cancellationToken);
        return Route(grouping, request.Documents, prefix: string.Empty, chunkIndex: 0, cancellationToken);
    }

    public async Task StreamRouteAsync(
        string tenant,
        IAsyncStreamReader<Proto.StreamRouteDocumentsRequest> requests,
        IServerStreamWriter<Proto.RouteDocumentsResponse> responses,
        CancellationToken cancellationToken)
    {
        SavedGrouping? grouping = null;
        int expected = 0;
        await foreach (Proto.StreamRouteDocumentsRequest chunk in requests.ReadAllAsync(cancellationToken))
        {
            if (chunk.ChunkIndex != expected)
            {
                throw StatusErrors.InvalidArgument(
                    "chunk_index",
                    $"is {chunk.ChunkIndex} but chunk {expected} was expected next; number the chunks 0, 1, 2, ... in sending order and send each exactly once.");
            }

            if (expected == 0)
            {
                grouping = await LoadAsync(tenant, GroupingNames.ParseName(chunk.Grouping, "grouping"), cancellationToken);
            }
            else if (chunk.Grouping.Length > 0)
            {
                throw StatusErrors.InvalidArgument("grouping", $"is set on chunk {chunk.ChunkIndex}; name the grouping on chunk 0 only.");
            }

            await responses.WriteAsync(Route(grouping!, chunk.Documents, $"chunks[{chunk.ChunkIndex}].", chunk.ChunkIndex, cancellationToken), cancellationToken);
            expected++;
        }

        if (expected == 0)
        {
            throw StatusErrors.InvalidArgument("grouping", "is missing: the stream ended before chunk 0; send chunk 0 with the grouping's name.");
        }
    }

    private Proto.RouteDocumentsResponse Route(
        SavedGrouping grouping, Google.Protobuf.Collections.RepeatedField<Proto.Document> documents, string prefix, int chunkIndex, CancellationToken cancellationToken)
    {
        (string[] ids, EmbeddingMatrix matrix) = RouteRequestValidator.ToMatrix(documents, grouping.Snapshot.Dimensions, _limits, prefix);
        RoutingResult routed = GroupRouting.Route(grouping.Snapshot, matrix, cancellationToken: cancellationToken);
        return SavedGroupingMapper.ToProto(routed, ids, chunkIndex);
    }

    private async Task<SavedGrouping> LoadAsync(string tenant, string id, CancellationToken cancellationToken) =>
        await StoreAsync(() => store.GetAsync(tenant, id, cancellationToken)) ?? throw NotFound(id);

    /// <summary>Runs a store call; a database that cannot be reached or read becomes UNAVAILABLE (and is logged).</summary>
    private async Task<T> StoreAsync<T>(Func<Task<T>> call)
    {
        try
        {
            return await call();
        }
        catch (Exception exception) when (exception is DbException or IOException or UnauthorizedAccessException or InvalidDataException or InvalidOperationException or TimeoutException)
        {
            logger.LogError(exception, "The grouping store failed");
            throw new RpcException(new Status(
                StatusCode.Unavailable,
                $"The grouping store failed: {exception.Message} Check the server's TopicGroups:Storage configuration and the database, then retry."));
        }
    }

    private static RpcException NotFound(string id) => new(new Status(
        StatusCode.NotFound,
        $"No saved grouping is named \"{GroupingNames.NameOf(id)}\"; ListGroupings lists the saved ones."));

    private static RpcException AlreadyExists(string id) => new(new Status(
        StatusCode.AlreadyExists,
        $"A grouping is already saved as \"{GroupingNames.NameOf(id)}\"; choose another options.save_as, or set options.replace_saved to replace it."));
}
