using Grpc.Core;
using TopicGroups.Protos.V1;
using Xunit;

namespace TopicGroups.Server.Tests.Validation;

/// <summary>Bad input through the real gRPC path: INVALID_ARGUMENT with a BadRequest naming the field and the fix.</summary>
public sealed class RequestValidationTests(TestHost host) : IClassFixture<TestHost>
{
    private Task<RpcException> GroupFailsAsync(IEnumerable<Document> documents, GroupingOptions? options) =>
        RpcAssert.FailsAsync(StatusCode.InvalidArgument, async () =>
        {
            var request = new GroupDocumentsRequest { Options = options };
            request.Documents.AddRange(documents);
            await host.Client.GroupDocumentsAsync(request);
        });

    private static GroupingOptions Groups(int count) => new() { GroupCount = count };

    [Fact]
    public async Task GroupDocuments_EmptyBatch_InvalidArgumentNamingDocuments()
    {
        RpcException error = await GroupFailsAsync([], Groups(1));

        var violation = RpcAssert.Single(error, "documents");
        Assert.Contains("at least one document", violation.Description);
    }

    [Fact]
    public async Task GroupDocuments_EmptyId_FieldViolationOnThatId()
    {
        var documents = TestBatches.Valid(4);
        documents[2].Id = "";

        RpcException error = await GroupFailsAsync(documents, Groups(2));

        var violation = RpcAssert.Single(error, "documents[2].id");
        Assert.Contains("is empty", violation.Description);
        Assert.Single(RpcAssert.Violations(error));
    }

    [Fact]
    public async Task GroupDocuments_DuplicateId_ViolationNamesBothDocuments()
    {
        var documents = TestBatches.Valid(5);
        documents[3].Id = documents[1].Id;

        RpcException error = await GroupFailsAsync(documents, Groups(2));

        var violation = RpcAssert.Single(error, "documents[3].id");
        Assert.Contains("documents[1]", violation.Description);
        Assert.Contains("unique", violation.Description);
    }

    [Fact]
    public async Task GroupDocuments_IdLongerThan256Characters_FieldViolation()
    {
        var documents = TestBatches.Valid(3);
        documents[0].Id = new string('x', 257);

        RpcException error = await GroupFailsAsync(documents, Groups(1));

        var violation = RpcAssert.Single(error, "documents[0].id");
        Assert.Contains("257 characters", violation.Description);
        Assert.Contains("at most 256", violation.Description);
    }

    [Fact]
    public async Task GroupDocuments_IdOf256Characters_Accepted()
    {
        var documents = TestBatches.Valid(3);
        documents[0].Id = new string('x', 256);
        var request = new GroupDocumentsRequest { Options = Groups(1) };
        request.Documents.AddRange(documents);

        GroupDocumentsResponse response = await host.Client.GroupDocumentsAsync(request);

        Assert.Equal(documents[0].Id, response.Documents[0].DocumentId);
    }

    [Fact]
    public async Task GroupDocuments_MissingEmbedding_FieldViolationStatesExpectedDimension()
    {
        var documents = TestBatches.Valid(4, d: 5);
        documents[1].Embedding.Clear();

        RpcException error = await GroupFailsAsync(documents, Groups(2));

        var violation = RpcAssert.Single(error, "documents[1].embedding");
        Assert.Contains("is empty", violation.Description);
        Assert.Contains("5 values", violation.Description);
    }

    [Fact]
    public async Task GroupDocuments_MixedEmbeddingDimensions_InvalidArgumentWithFieldViolation()
    {
        var documents = TestBatches.Valid(4, d: 6);
        documents[3] = TestBatches.Make("short", 1f, 2f, 3f);

        RpcException error = await GroupFailsAsync(documents, Groups(2));

        var violation = RpcAssert.Single(error, "documents[3].embedding");
        Assert.Contains("has 3 values but documents[0].embedding has 6", violation.Description);
        Assert.Contains("documents[3].embedding", error.Status.Detail); // the status message alone also says it
    }

    [Theory]
    [InlineData(float.NaN, "NaN")]
    [InlineData(float.PositiveInfinity, "+Infinity")]
    [InlineData(float.NegativeInfinity, "-Infinity")]
    public async Task GroupDocuments_NonFiniteValue_FieldViolationNamesPosition(float value, string name)
    {
        var documents = TestBatches.Valid(4, d: 4);
        documents[2].Embedding[3] = value;

        RpcException error = await GroupFailsAsync(documents, Groups(2));

        var violation = RpcAssert.Single(error, "documents[2].embedding");
        Assert.Contains($"has {name} at position 3", violation.Description);
        Assert.Contains("finite", violation.Description);
    }

    [Fact]
    public async Task GroupDocuments_AllZeroEmbedding_FieldViolation()
    {
        var documents = TestBatches.Valid(4, d: 3);
        documents[1] = TestBatches.Make("blank", 0f, -0f, 0f);

        RpcException error = await GroupFailsAsync(documents, Groups(2));

        var violation = RpcAssert.Single(error, "documents[1].embedding");
        Assert.Contains("all zeros", violation.Description);
    }

    [Theory]
    [InlineData(3e38f)]    // squared length overflows float32
    [InlineData(1e-30f)]   // squared length underflows to 0
    public async Task GroupDocuments_ExtremeButFiniteValues_AcceptedAndPlacedByDirection(float scale)
    {
        var documents = TestBatches.Valid(4, d: 3);   // directions (1, .5, 0), (0, 1, .5), (.5, 0, 1), (1, .5, 0)
        documents[3] = TestBatches.Make("scaled", scale, 0.5f * scale, 0f);   // same direction as documents[0]
        var request = new GroupDocumentsRequest { Options = Groups(3) };
        request.Documents.AddRange(documents);

        GroupDocumentsResponse response = await host.Client.GroupDocumentsAsync(request);

        Assert.Equal(response.Documents[0].GroupId, response.Documents[3].GroupId);
        Assert.Equal(1f, response.Documents[3].Similarity, 1e-5f);
    }

    [Theory]
    [InlineData(-1)]
    [InlineData(-3)]
    public async Task GroupDocuments_GroupCountNegative_FieldViolationStatesRange(int groupCount)
    {
        RpcException error = await GroupFailsAsync(TestBatches.Valid(7), Groups(groupCount));

        var violation = RpcAssert.Single(error, "options.group_count");
        Assert.Contains($"is {groupCount}", violation.Description);
        Assert.Contains("from 1 to 7", violation.Description);
    }

    [Fact]
    public async Task GroupDocuments_GroupCountAboveDocumentCount_FieldViolation()
    {
        RpcException error = await GroupFailsAsync(TestBatches.Valid(5), Groups(6));

        var violation = RpcAssert.Single(error, "options.group_count");
        Assert.Contains("only 5 documents", violation.Description);
    }

    [Fact]
    public async Task GroupDocuments_MissingOptions_FieldViolation()
    {
        RpcException error = await GroupFailsAsync(TestBatches.Valid(5), options: null);

        var violation = RpcAssert.Single(error, "options");
        Assert.Contains("options.group_count", violation.Description);
    }

    [Fact]
    public async Task GroupDocuments_NegativeCounts_OneViolationPerOption()
    {
        var options = new GroupingOptions { GroupCount = 2, RestartCount = -1, MaxIterations = -2, TermCount = -3, ExampleCount = -4 };

        RpcException error = await GroupFailsAsync(TestBatches.Valid(5), options);

        Assert.Contains("is -1; use 0 for the server default", RpcAssert.Single(error, "options.restart_count").Description);
        Assert.Contains("is -2", RpcAssert.Single(error, "options.max_iterations").Description);
        Assert.Contains("is -3", RpcAssert.Single(error, "options.term_count").Description);
        Assert.Contains("is -4", RpcAssert.Single(error, "options.example_count").Description);
        Assert.Equal(4, RpcAssert.Violations(error).Count);
    }

    [Fact]
    public async Task GroupDocuments_OptionsAboveDefaultLimits_ViolationStatesLimitAndKey()
    {
        var options = new GroupingOptions { GroupCount = 2, RestartCount = 65, MaxIterations = 1001, TermCount = 101, ExampleCount = 101 };

        RpcException error = await GroupFailsAsync(TestBatches.Valid(5), options);

        Assert.Contains("at most 64 (TopicGroups:Limits:MaxRestartCount)", RpcAssert.Single(error, "options.restart_count").Description);
        Assert.Contains("at most 1000 (TopicGroups:Limits:MaxIterations)", RpcAssert.Single(error, "options.max_iterations").Description);
        Assert.Contains("at most 100", RpcAssert.Single(error, "options.term_count").Description);
        Assert.Contains("at most 100", RpcAssert.Single(error, "options.example_count").Description);
    }

    [Fact]
    public async Task GroupDocuments_SeveralDifferentProblems_AllInOneError()
    {
        var documents = TestBatches.Valid(6, d: 4);
        documents[0].Id = "";
        documents[2].Embedding[0] = float.NaN;
        documents[4] = TestBatches.Make("doc-4", 1f, 2f);

        RpcException error = await GroupFailsAsync(documents, Groups(9));

        var fields = RpcAssert.Violations(error).Select(v => v.Field).ToList();
        Assert.Equal(["documents[0].id", "documents[2].embedding", "documents[4].embedding", "options.group_count"], fields);
        Assert.Contains("4 problems", error.Status.Detail);
    }

    [Fact]
    public async Task GroupDocuments_ThirtyBadDocuments_TwentyViolationsReported()
    {
        var documents = TestBatches.Valid(30);
        foreach (Document document in documents)
        {
            document.Id = "";
        }

        RpcException error = await GroupFailsAsync(documents, Groups(2));

        var violations = RpcAssert.Violations(error);
        Assert.Equal(20, violations.Count);
        Assert.Equal("documents[19].id", violations[^1].Field);
    }
}
