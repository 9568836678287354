using TopicGroups.Core.Grouping;
using Proto = TopicGroups.Protos.V1;

namespace TopicGroups.Server.Mapping;

/// <summary>The Core's 2-D map into the reply: coordinates onto each placement, axes and centres into response.map.</summary>
internal static class DocumentMapMapper
{
    /// <summary>
    /// Expects response.documents (or response.packed_documents) in the result's document order (as
    /// <see cref="ResponseMapper"/> writes them).
    /// </summary>
    public static void AddTo(Proto.GroupDocumentsResponse response, DocumentMap map)
    {
        if (response.PackedDocuments is { } packed)
        {
            int n = map.Coordinates.Length / 2;
            packed.MapX.Capacity = n;
            packed.MapY.Capacity = n;
            for (int i = 0; i < n; i++)
            {
                packed.MapX.Add(map.Coordinates[2 * i]);
                packed.MapY.Add(map.Coordinates[2 * i + 1]);
            }
        }

        for (int i = 0; i < response.Documents.Count; i++)
        {
            response.Documents[i].MapX = map.Coordinates[2 * i];
            response.Documents[i].MapY = map.Coordinates[2 * i + 1];
        }

        var proto = new Proto.DocumentMap
        {
            XVarianceShare = map.XVarianceShare,
            YVarianceShare = map.YVarianceShare,
            FittedDocumentCount = map.FittedDocumentCount,
        };
        for (int g = 0; g < map.GroupCentres.Length / 2; g++)
        {
            proto.GroupCentres.Add(new Proto.MapPoint { X = map.GroupCentres[2 * g], Y = map.GroupCentres[2 * g + 1] });
        }

        response.Map = proto;
    }
}
