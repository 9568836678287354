using Grpc.Core;
using TopicGroups.Protos.V1;

namespace TopicGroups.Client;

/// <summary>
/// The packed reply (GroupingOptions.packed_placements): asks for it, and turns its columns back into one
/// DocumentPlacement per document, with the ids of the batch that was sent, so callers see the same reply either way.
/// </summary>
internal static class PackedPlacementReply
{
    /// <summary>The caller's options when they already ask (or packing is off); otherwise a copy that asks, so the caller's object is not changed.</summary>
    public static GroupingOptions Request(GroupingOptions options, bool packPlacements)
    {
        if (!packPlacements || options.PackedPlacements)
        {
            return options;
        }

        GroupingOptions asking = options.Clone();
        asking.PackedPlacements = true;
        return asking;
    }

    /// <summary>
    /// Fills response.documents from response.packed_documents (and clears the latter); a reply without
    /// packed_documents (a server that predates it, or packing off) is returned as it came.
    /// </summary>
    /// <param name="response">The server's reply.</param>
    /// <param name="count">Documents sent.</param>
    /// <param name="idOf">The id of the i-th document sent.</param>
    /// <exception cref="RpcException">INTERNAL when a column's length does not match the batch (a server fault).</exception>
    public static GroupDocumentsResponse Expand(GroupDocumentsResponse response, int count, Func<int, string> idOf)
    {
        PackedPlacements? packed = response.PackedDocuments;
        if (packed is null)
        {
            return response;
        }

        if (response.Documents.Count > 0)
        {
            throw ServerFault($"carries both documents ({response.Documents.Count}) and packed_documents");
        }

        CheckLength("group_ids", packed.GroupIds.Count, count);
        CheckLength("similarities", packed.Similarities.Count, count);
        CheckLength("margins", packed.Margins.Count, count);
        CheckLength("runner_up_group_ids", packed.RunnerUpGroupIds.Count, count);
        CheckLength("runner_up_similarities", packed.RunnerUpSimilarities.Count, count);
        CheckLength("is_outliers", packed.IsOutliers.Count, count);
        bool hasMap = packed.MapX.Count > 0 || packed.MapY.Count > 0;
        if (hasMap)
        {
            CheckLength("map_x", packed.MapX.Count, count);
            CheckLength("map_y", packed.MapY.Count, count);
        }

        response.Documents.Capacity = count;
        for (int i = 0; i < count; i++)
        {
            response.Documents.Add(new DocumentPlacement
            {
                DocumentId = idOf(i),
                GroupId = packed.GroupIds[i],
                Similarity = packed.Similarities[i],
                Margin = packed.Margins[i],
                RunnerUpGroupId = packed.RunnerUpGroupIds[i],
                RunnerUpSimilarity = packed.RunnerUpSimilarities[i],
                IsOutlier = packed.IsOutliers[i],
                MapX = hasMap ? packed.MapX[i] : 0f,
                MapY = hasMap ? packed.MapY[i] : 0f,
            });
        }

        response.PackedDocuments = null;
        return response;
    }

    private static void CheckLength(string column, int length, int count)
    {
        if (length != count)
        {
            throw ServerFault($"has {length} entries in packed_documents.{column} for the {count} documents sent");
        }
    }

    private static RpcException ServerFault(string what) => new(new Status(
        StatusCode.Internal,
        $"The server's reply {what}; this is a server fault, please report it (setting TopicGroupsClientOptions.PackPlacements to false avoids the packed reply)."));
}
