using TopicGroups.Core.Grouping;
using Proto = TopicGroups.Protos.V1;

namespace TopicGroups.Server.Mapping;

/// <summary>Core results and progress to proto messages. Copies values; computes nothing.</summary>
internal static class ResponseMapper
{
    public static Proto.GroupDocumentsResponse ToProto(GroupingResult result)
    {
        var response = new Proto.GroupDocumentsResponse { Statistics = ToProto(result.Statistics) };
        response.Groups.Capacity = result.Groups.Count;
        foreach (GroupSummary group in result.Groups)
        {
            response.Groups.Add(ToProto(group));
        }

        response.Documents.Capacity = result.Documents.Count;
        foreach (DocumentPlacement placement in result.Documents)
        {
            response.Documents.Add(new Proto.DocumentPlacement
            {
                DocumentId = placement.DocumentId,
                GroupId = placement.GroupId,
                Similarity = placement.Similarity,
                Margin = placement.Margin,
                RunnerUpGroupId = placement.RunnerUpGroupId,
                IsOutlier = placement.IsOutlier,
            });
        }

        return response;
    }

    public static Proto.GroupingProgress ToProto(GroupingProgress progress) => new()
    {
        Stage = progress.Stage switch
        {
            GroupingStage.Seeding => Proto.GroupingStage.Seeding,
            GroupingStage.Refining => Proto.GroupingStage.Refining,
            GroupingStage.Describing => Proto.GroupingStage.Describing,
            _ => Proto.GroupingStage.Unspecified,
        },
        Restart = progress.Restart,
        Iteration = progress.Iteration,
        Objective = progress.Objective,
    };

    private static Proto.Group ToProto(GroupSummary group)
    {
        var proto = new Proto.Group
        {
            Id = group.Id,
            Size = group.Size,
            Cohesion = group.Cohesion,
            OutlierCount = group.OutlierCount,
        };
        foreach (var term in group.Terms)
        {
            proto.Terms.Add(new Proto.WeightedTerm { Term = term.Term, Weight = term.Weight });
        }

        foreach (GroupExample example in group.Examples)
        {
            proto.Examples.Add(new Proto.GroupExample
            {
                DocumentId = example.DocumentId,
                Text = example.Text,
                Similarity = example.Similarity,
            });
        }

        return proto;
    }

    private static Proto.RunStatistics ToProto(RunStatistics statistics) => new()
    {
        Objective = statistics.Objective,
        Iterations = statistics.Iterations,
        Converged = statistics.Converged,
        Seconds = statistics.Elapsed.TotalSeconds,
        SeedingSeconds = statistics.SeedingTime.TotalSeconds,
        RestartCount = statistics.RestartCount,
        DocumentCount = statistics.DocumentCount,
        Dimensions = statistics.Dimensions,
    };
}
