using TopicGroups.Cli.Commands;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Tests.TestSupport;

/// <summary>
/// A stand-in for the service behind <see cref="GroupingCall"/>: records what it was sent and answers
/// from the embeddings themselves (document → the group of its largest value among the first k
/// coordinates), so a test can tell whether the right vectors reached the call.
/// </summary>
internal sealed class FakeGrouping
{
    public Uri? Server { get; private set; }

    public List<Document>? Documents { get; private set; }

    public GroupingOptions? Options { get; private set; }

    public int Calls { get; private set; }

    /// <summary>When set, the call throws it instead of answering.</summary>
    public Exception? Failure { get; init; }

    public GroupingCall Call => (server, documents, options, progress, cancellationToken) =>
    {
        Calls++;
        Server = server;
        Documents = documents.ToList();
        Options = options;
        if (Failure is not null)
        {
            throw Failure;
        }

        return Task.FromResult(Respond(documents, options.GroupCount));
    };

    public static GroupDocumentsResponse Respond(IReadOnlyList<Document> documents, int groupCount)
    {
        var response = new GroupDocumentsResponse();
        var members = Enumerable.Range(0, groupCount).Select(_ => new List<(Document Document, float Similarity)>()).ToArray();
        foreach (Document document in documents)
        {
            int best = 0;
            for (int g = 1; g < groupCount && g < document.Embedding.Count; g++)
            {
                if (document.Embedding[g] > document.Embedding[best])
                {
                    best = g;
                }
            }

            float similarity = document.Embedding[best];
            members[best].Add((document, similarity));
            response.Documents.Add(new DocumentPlacement
            {
                DocumentId = document.Id,
                GroupId = best + 1,
                Similarity = similarity,
                Margin = 0.1f,
                RunnerUpGroupId = groupCount > 1 ? (best + 1) % groupCount + 1 : 0,
                RunnerUpSimilarity = groupCount > 1 ? 0.5f : 0f,
                IsOutlier = similarity < 0.2f,
            });
        }

        for (int g = 0; g < groupCount; g++)
        {
            var group = new Group
            {
                Id = g + 1,
                Size = members[g].Count,
                Cohesion = members[g].Count > 0 ? members[g].Average(m => m.Similarity) : 0,
                OutlierCount = members[g].Count(m => m.Similarity < 0.2f),
            };
            group.Terms.Add(new WeightedTerm { Term = $"term{g + 1}", Weight = 1.5 });
            foreach (var (document, similarity) in members[g].OrderByDescending(m => m.Similarity).Take(3))
            {
                group.Examples.Add(new GroupExample { DocumentId = document.Id, Text = document.Text, Similarity = similarity });
            }

            response.Groups.Add(group);
        }

        response.Statistics = new RunStatistics
        {
            Objective = documents.Count > 0 ? response.Documents.Average(d => d.Similarity) : 0,
            Iterations = 3,
            Converged = true,
            Seconds = 0.01,
            RestartCount = 1,
            DocumentCount = documents.Count,
            Dimensions = documents.Count > 0 ? documents[0].Embedding.Count : 0,
        };
        return response;
    }
}
