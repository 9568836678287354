using System.Buffers.Text;
using System.Globalization;
using System.Text;
using Google.Protobuf.WellKnownTypes;
using TopicGroups.Core.Grouping;
using TopicGroups.Server.Storage;
using TopicGroups.Server.Validation;
using Proto = TopicGroups.Protos.V1;

namespace TopicGroups.Server.Mapping;

/// <summary>Saved groupings, change reports, routing results and page tokens to proto messages. Copies values; computes nothing.</summary>
internal static class SavedGroupingMapper
{
    private const string PageTokenVersion = "1";

    public static Proto.Grouping ToProto(SavedGrouping grouping, Proto.GroupingView view)
    {
        GroupingSnapshot snapshot = grouping.Snapshot;
        Proto.Grouping proto = Header(grouping.Id, grouping.CreatedAt, snapshot.Groups.Count, snapshot.DocumentCount, snapshot.Dimensions, snapshot.Objective, grouping.Options);
        proto.HighestGroupId = snapshot.HighestGroupId;
        proto.OutlierScoreThreshold = snapshot.OutlierScoreThreshold;
        proto.OutlierMinimumGroupSize = snapshot.OutlierMinimumGroupSize;
        int d = snapshot.Dimensions;
        for (int g = 0; g < snapshot.Groups.Count; g++)
        {
            SnapshotGroup group = snapshot.Groups[g];
            var protoGroup = new Proto.Group
            {
                Id = group.Id,
                Size = group.Size,
                Cohesion = group.Cohesion,
                OutlierCount = group.OutlierCount,
                SimilarityMedian = group.SimilarityMedian,
                SimilarityMad = group.SimilarityMad,
            };
            foreach (var term in group.Terms)
            {
                protoGroup.Terms.Add(new Proto.WeightedTerm { Term = term.Term, Weight = term.Weight });
            }

            foreach (GroupExample example in group.Examples)
            {
                protoGroup.Examples.Add(new Proto.GroupExample { DocumentId = example.DocumentId, Text = example.Text, Similarity = example.Similarity });
            }

            if (view == Proto.GroupingView.Full)
            {
                protoGroup.Centre.Add(new ArraySegment<float>(snapshot.Centroids, g * d, d));
            }

            proto.Groups.Add(protoGroup);
        }

        return proto;
    }

    public static Proto.Grouping ToProto(SavedGroupingSummary summary) =>
        Header(summary.Id, summary.CreatedAt, summary.GroupCount, summary.DocumentCount, summary.Dimensions, summary.Objective, summary.Options);

    public static Proto.ChangeReport ToProto(ChangeReport report, string referenceName, bool warmStarted)
    {
        var proto = new Proto.ChangeReport
        {
            Reference = referenceName,
            ReferenceDocumentCount = report.ReferenceDocumentCount,
            DocumentCount = report.DocumentCount,
            MinMatchSimilarity = (float)report.MinimumMatchSimilarity,
            WarmStarted = warmStarted,
        };
        foreach (ThemeChange theme in report.Themes)
        {
            var change = new Proto.ThemeChange
            {
                GroupId = theme.GroupId,
                Kind = theme.Kind switch
                {
                    ThemeChangeKind.Continued => Proto.ThemeChangeKind.Continued,
                    ThemeChangeKind.New => Proto.ThemeChangeKind.New,
                    ThemeChangeKind.Faded => Proto.ThemeChangeKind.Faded,
                    _ => Proto.ThemeChangeKind.Unspecified,
                },
                SizeThen = theme.SizeThen,
                SizeNow = theme.SizeNow,
                CentreSimilarity = (float)theme.CentreSimilarity,
                ClosestGroupId = theme.ClosestGroupId,
            };
            change.Terms.Add(theme.Terms);
            change.TermsRose.Add(theme.TermsRose);
            change.TermsFell.Add(theme.TermsFell);
            proto.Themes.Add(change);
        }

        return proto;
    }

    public static Proto.RouteDocumentsResponse ToProto(RoutingResult routed, string[] ids, int chunkIndex = 0)
    {
        var response = new Proto.RouteDocumentsResponse { ChunkIndex = chunkIndex };
        response.Documents.Capacity = routed.Count;
        for (int i = 0; i < routed.Count; i++)
        {
            response.Documents.Add(new Proto.DocumentPlacement
            {
                DocumentId = ids[i],
                GroupId = routed.GroupIds[i],
                Similarity = routed.Similarities[i],
                Margin = routed.Margins[i],
                RunnerUpGroupId = routed.RunnerUpGroupIds[i],
                IsOutlier = routed.IsOutlier[i],
            });
        }

        return response;
    }

    /// <summary>The options a grouping was made with, as the request would have said them (every default filled in).</summary>
    public static Proto.GroupingOptions ToProto(GroupingOptions options) => new()
    {
        GroupCount = options.GroupCount,
        Seed = options.Seed,
        RestartCount = options.RestartCount,
        MaxIterations = options.MaxIterations,
        TermCount = options.TermCount,
        ExampleCount = options.ExampleCount,
        IncludeBigrams = options.IncludeBigrams,
    };

    /// <summary>An opaque token: base64url of "1:{created microseconds}:{id}".</summary>
    public static string ToPageToken(GroupingPageToken token) =>
        Base64Url.EncodeToString(Encoding.UTF8.GetBytes(
            string.Create(CultureInfo.InvariantCulture, $"{PageTokenVersion}:{token.CreatedAtMicroseconds}:{token.Id}")));

    /// <summary>Reads a token made by <see cref="ToPageToken"/>; INVALID_ARGUMENT on page_token otherwise.</summary>
    public static GroupingPageToken? FromPageToken(string token)
    {
        if (token.Length == 0)
        {
            return null;
        }

        try
        {
            string[] parts = Encoding.UTF8.GetString(Base64Url.DecodeFromChars(token)).Split(':', 3);
            if (parts.Length == 3 && parts[0] == PageTokenVersion
                && long.TryParse(parts[1], NumberStyles.Integer, CultureInfo.InvariantCulture, out long created)
                && GroupingNames.IsValidId(parts[2]))
            {
                return new GroupingPageToken(created, parts[2]);
            }
        }
        catch (FormatException)
        {
            // Not base64url: reported below.
        }

        throw StatusErrors.InvalidArgument(
            "page_token", "is not a token this server made; pass next_page_token from the previous ListGroupings reply unchanged, or leave it empty for the first page.");
    }

    private static Proto.Grouping Header(
        string id, DateTimeOffset createdAt, int groupCount, int documentCount, int dimensions, double objective, GroupingOptions options) => new()
    {
        Name = GroupingNames.NameOf(id),
        CreateTime = Timestamp.FromDateTimeOffset(createdAt),
        Options = ToProto(options),
        GroupCount = groupCount,
        DocumentCount = documentCount,
        Dimensions = dimensions,
        Objective = objective,
    };
}
