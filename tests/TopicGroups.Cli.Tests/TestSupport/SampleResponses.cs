using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Tests.TestSupport;

/// <summary>A small, hand-written result: groups out of size order, an awkward id, a long multi-line example.</summary>
internal static class SampleResponses
{
    public const string LongText =
        "My parcel was marked delivered\non Tuesday but nothing arrived;\tthe courier's photo shows a door that is not mine, "
        + "and the building has no parcel room either.";

    public static GroupDocumentsResponse TwoGroups()
    {
        var response = new GroupDocumentsResponse
        {
            Statistics = new RunStatistics
            {
                Objective = 0.61234,
                Iterations = 7,
                Converged = true,
                Seconds = 0.125,
                SeedingSeconds = 0.01,
                RestartCount = 4,
                DocumentCount = 5,
                Dimensions = 384,
            },
        };

        var small = new Group { Id = 2, Size = 2, Cohesion = 0.55, OutlierCount = 0 };
        small.Terms.Add(new WeightedTerm { Term = "password", Weight = 3.25 });
        small.Terms.Add(new WeightedTerm { Term = "reset link", Weight = 1.5 });
        small.Examples.Add(new GroupExample { DocumentId = "p-1", Text = "Password reset link expired", Similarity = 0.9f });

        var large = new Group { Id = 1, Size = 3, Cohesion = 0.7, OutlierCount = 1 };
        large.Terms.Add(new WeightedTerm { Term = "parcel", Weight = 4 });
        large.Terms.Add(new WeightedTerm { Term = "courier", Weight = 2 });
        large.Examples.Add(new GroupExample { DocumentId = "d,\"1\"", Text = LongText, Similarity = 0.95f });
        large.Examples.Add(new GroupExample { DocumentId = "d-2", Text = "Where is my box?", Similarity = 0.8f });
        large.Examples.Add(new GroupExample { DocumentId = "d-3", Text = "third example, not in the report", Similarity = 0.3f });

        response.Groups.Add(small); // out of order on purpose: the report sorts by size
        response.Groups.Add(large);

        response.Documents.Add(new DocumentPlacement { DocumentId = "d,\"1\"", GroupId = 1, Similarity = 0.95f, Margin = 0.5f, RunnerUpGroupId = 2, RunnerUpSimilarity = 0.45f });
        response.Documents.Add(new DocumentPlacement { DocumentId = "p-1", GroupId = 2, Similarity = 0.9f, Margin = 0.25f, RunnerUpGroupId = 1, RunnerUpSimilarity = 0.65f });
        response.Documents.Add(new DocumentPlacement { DocumentId = "d-2", GroupId = 1, Similarity = 0.8f, Margin = 0.125f, RunnerUpGroupId = 2 });
        response.Documents.Add(new DocumentPlacement { DocumentId = "p-2", GroupId = 2, Similarity = 0.2f, Margin = 0.01f, RunnerUpGroupId = 1 });
        response.Documents.Add(new DocumentPlacement { DocumentId = "d-3", GroupId = 1, Similarity = 0.3f, Margin = -0.0f, RunnerUpGroupId = 2, RunnerUpSimilarity = 0.3f, IsOutlier = true });
        return response;
    }
}
