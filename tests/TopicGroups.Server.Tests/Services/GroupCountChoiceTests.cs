using Grpc.Core;
using TopicGroups.Protos.V1;
using Xunit;

namespace TopicGroups.Server.Tests.Services;

/// <summary>Choosing the group count, quality figures and the outlier options, through the real gRPC path.</summary>
public sealed class GroupCountChoiceTests(TestHost host) : IClassFixture<TestHost>
{
    private const int Seed = 20251;

    private static GroupDocumentsRequest Request(IEnumerable<Document> documents, GroupingOptions? options)
    {
        var request = new GroupDocumentsRequest { Options = options };
        request.Documents.AddRange(documents);
        return request;
    }

    private Task<RpcException> GroupFailsAsync(IEnumerable<Document> documents, GroupingOptions options) =>
        RpcAssert.FailsAsync(StatusCode.InvalidArgument, () => host.Client.GroupDocumentsAsync(Request(documents, options)).ResponseAsync);

    [Fact]
    public async Task GroupDocuments_GroupCountZero_ChoosesThemeCountAndReturnsCurve()
    {
        var (documents, themes) = TestBatches.WellSeparated(groupCount: 5, perTheme: 40, dimensions: 16, seed: Seed);

        GroupDocumentsResponse response = await host.Client.GroupDocumentsAsync(Request(documents, new GroupingOptions { GroupCount = 0 }));

        GroupCountChoice choice = response.GroupCountChoice;
        Assert.NotNull(choice);
        Assert.Equal(5, choice.ChosenGroupCount);
        Assert.Equal(5, response.Groups.Count);
        Assert.Equal((2, 10), (choice.Minimum, choice.Maximum));          // default range for 200 documents: 2..⌊√100⌋
        Assert.Equal(GroupCountChoiceReason.HighestSilhouette, choice.Reason);
        Assert.False(choice.NoStructure);
        Assert.Equal(Enumerable.Range(2, 9), choice.Candidates.Select(c => c.GroupCount));   // a short range: every count
        Assert.Equal(choice.Candidates.Max(c => c.Silhouette), choice.BestSilhouette);
        Assert.StartsWith("5 groups: the highest mean silhouette", choice.Explanation);
        Assert.Equal(200, choice.SilhouetteSampleSize);
        // The near-tie margin is one standard error of the best count's sampled mean silhouette.
        Assert.Equal(choice.Candidates.Single(c => c.GroupCount == 5).SilhouetteStandardError, choice.TieTolerance);
        Assert.All(choice.Candidates, c => Assert.InRange(c.SilhouetteStandardError, 1e-6, 0.1));
        Assert.Contains(choice.Candidates, c => c.WarmStarted == false);
        Assert.All(choice.Candidates, c => Assert.InRange(c.Moves, 0, 16));
        // Each theme lands whole in one group.
        for (int t = 0; t < 5; t++)
        {
            Assert.Single(Enumerable.Range(0, 200).Where(i => themes[i] == t).Select(i => response.Documents[i].GroupId).Distinct());
        }
    }

    [Fact]
    public async Task GroupDocuments_GroupCountRange_SearchesOnlyThatRange()
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 4, perTheme: 30, dimensions: 16, seed: Seed);
        var options = new GroupingOptions { GroupCount = 0, GroupCountRange = new GroupCountRange { Minimum = 3, Maximum = 6 } };

        GroupDocumentsResponse response = await host.Client.GroupDocumentsAsync(Request(documents, options));

        Assert.Equal([3, 4, 5, 6], response.GroupCountChoice.Candidates.Select(c => c.GroupCount));
        Assert.Equal(4, response.GroupCountChoice.ChosenGroupCount);
    }

    [Fact]
    public async Task GroupDocuments_Quality_FiguresPerGroupAndOverall()
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 4, perTheme: 25, dimensions: 16, seed: Seed);

        GroupDocumentsResponse response = await host.Client.GroupDocumentsAsync(Request(documents, new GroupingOptions { GroupCount = 4 }));

        Assert.Null(response.GroupCountChoice);                           // a fixed count: nothing was chosen
        Assert.True(response.Quality.HasSilhouette);
        Assert.InRange(response.Quality.Silhouette, 0.5, 1.0);
        Assert.False(response.Quality.NoStructure);
        Assert.Equal(100, response.Quality.SampleSize);
        Assert.Equal(100, response.Groups.Sum(g => g.SilhouetteSampleCount));
        Assert.All(response.Groups, g =>
        {
            Assert.NotEqual(g.Id, g.NearestGroupId);
            Assert.InRange(g.NearestGroupId, 1, 4);
            Assert.InRange(g.NearestGroupSimilarity, -0.5, 0.5);             // themes lie on different axes
            Assert.True(g.HasSilhouette);
            Assert.Empty(g.Suggestions);
        });
        Assert.All(response.Documents, d => Assert.Equal(d.Similarity - d.Margin, d.RunnerUpSimilarity, 1e-5f));
    }

    [Fact]
    public async Task GroupDocuments_TwoThemesInOneGroup_SuggestionWithNumbers()
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 4, perTheme: 30, dimensions: 16, seed: Seed);

        GroupDocumentsResponse response = await host.Client.GroupDocumentsAsync(Request(documents, new GroupingOptions { GroupCount = 3 }));

        Group merged = response.Groups.Single(g => g.Size == 60);
        GroupSuggestion suggestion = Assert.Single(merged.Suggestions);
        Assert.Equal(SuggestionKind.ProbablyTwoThemes, suggestion.Kind);
        Assert.Equal([30, 30], suggestion.PartSizes);
        Assert.True(suggestion.SplitSilhouette >= 0.25);
        Assert.StartsWith("probably two themes", suggestion.Message);
    }

    [Fact]
    public async Task StreamGroupDocuments_GroupCountZero_ProgressReportsCandidates()
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 3, perTheme: 30, dimensions: 16, seed: Seed);
        var stages = new List<GroupingProgress>();
        GroupDocumentsResponse? result = null;
        using (var call = host.Client.StreamGroupDocuments())
        {
            var request = new StreamGroupDocumentsRequest { ChunkIndex = 0, Options = new GroupingOptions { GroupCount = 0 } };
            request.Documents.AddRange(documents);
            await call.RequestStream.WriteAsync(request);
            await call.RequestStream.CompleteAsync();
            await foreach (StreamGroupDocumentsResponse response in call.ResponseStream.ReadAllAsync())
            {
                if (response.EventCase == StreamGroupDocumentsResponse.EventOneofCase.Progress)
                {
                    stages.Add(response.Progress);
                }
                else
                {
                    result = response.Result;
                }
            }
        }

        Assert.NotNull(result);
        Assert.Equal(3, result.GroupCountChoice.ChosenGroupCount);
        List<GroupingProgress> candidates = stages.Where(p => p.Stage == GroupingStage.ChoosingGroupCount).ToList();
        Assert.Equal(result.GroupCountChoice.Candidates.Select(c => c.GroupCount), candidates.Select(p => p.Iteration).Order());
        Assert.True(stages.FindLastIndex(p => p.Stage == GroupingStage.ChoosingGroupCount) < stages.FindIndex(p => p.Stage == GroupingStage.Describing));
    }

    [Fact]
    public async Task GroupDocuments_OutlierThreshold_LowerFlagsMore()
    {
        List<Document> documents = TestBatches.Random(count: 300, dimensions: 12, seed: Seed);

        GroupDocumentsResponse strict = await host.Client.GroupDocumentsAsync(Request(documents, new GroupingOptions { GroupCount = 3, OutlierThreshold = 1.0 }));
        GroupDocumentsResponse usual = await host.Client.GroupDocumentsAsync(Request(documents, new GroupingOptions { GroupCount = 3 }));
        GroupDocumentsResponse tiny = await host.Client.GroupDocumentsAsync(
            Request(documents, new GroupingOptions { GroupCount = 3, OutlierThreshold = 1.0, OutlierMinimumGroupSize = 1_000 }));

        int Flagged(GroupDocumentsResponse r) => r.Documents.Count(d => d.IsOutlier);
        Assert.True(Flagged(strict) > Flagged(usual), $"threshold 1.0 flagged {Flagged(strict)}, default 3.5 flagged {Flagged(usual)}");
        Assert.Equal(0, Flagged(tiny));                                   // every group is below the minimum size
    }

    [Fact]
    public async Task GroupDocuments_RangeWithFixedCount_ViolationOnRange()
    {
        var options = new GroupingOptions { GroupCount = 3, GroupCountRange = new GroupCountRange { Minimum = 2, Maximum = 5 } };

        RpcException error = await GroupFailsAsync(TestBatches.Valid(10), options);

        var violation = RpcAssert.Single(error, "options.group_count_range");
        Assert.Contains("leave group_count 0", violation.Description);
    }

    [Theory]
    [InlineData(1, 5, "options.group_count_range.minimum", "at least 2")]
    [InlineData(-2, 5, "options.group_count_range.minimum", "is -2")]
    [InlineData(2, 1, "options.group_count_range.maximum", "at least 2")]
    [InlineData(2, 10, "options.group_count_range.maximum", "at most 9 groups")]
    [InlineData(6, 4, "options.group_count_range.maximum", "below minimum 6")]
    [InlineData(10, 0, "options.group_count_range.minimum", "only 10 documents")]
    [InlineData(2, 1001, "options.group_count_range.maximum", "TopicGroups:Limits:MaxGroupCount")]
    public async Task GroupDocuments_BadRange_FieldViolationNamesTheEnd(int minimum, int maximum, string field, string text)
    {
        var options = new GroupingOptions { GroupCount = 0, GroupCountRange = new GroupCountRange { Minimum = minimum, Maximum = maximum } };

        RpcException error = await GroupFailsAsync(TestBatches.Valid(10), options);

        Assert.Contains(text, RpcAssert.Single(error, field).Description);
    }

    [Fact]
    public async Task GroupDocuments_ChooseWithTwoDocuments_ViolationAsksForAFixedCount()
    {
        RpcException error = await GroupFailsAsync(TestBatches.Valid(2), new GroupingOptions { GroupCount = 0 });

        var violation = RpcAssert.Single(error, "options.group_count");
        Assert.Contains("at least 3 documents", violation.Description);
        Assert.Contains("from 1 to 2", violation.Description);
    }

    [Theory]
    [InlineData(-1.0)]
    [InlineData(double.NaN)]
    [InlineData(double.PositiveInfinity)]
    public async Task GroupDocuments_BadOutlierThreshold_FieldViolation(double threshold)
    {
        RpcException error = await GroupFailsAsync(TestBatches.Valid(10), new GroupingOptions { GroupCount = 2, OutlierThreshold = threshold });

        Assert.Contains("use 0 for the server default (3.5)", RpcAssert.Single(error, "options.outlier_threshold").Description);
    }

    [Fact]
    public async Task GroupDocuments_BadSampleAndMinimumGroupSize_OneViolationEach()
    {
        var options = new GroupingOptions { GroupCount = 2, SilhouetteSampleSize = 1, OutlierMinimumGroupSize = -4 };

        RpcException error = await GroupFailsAsync(TestBatches.Valid(10), options);

        Assert.Contains("at least 2", RpcAssert.Single(error, "options.silhouette_sample_size").Description);
        Assert.Contains("is -4", RpcAssert.Single(error, "options.outlier_minimum_group_size").Description);
    }

    [Fact]
    public async Task GroupDocuments_SampleAboveLimit_ViolationStatesLimitAndKey()
    {
        RpcException error = await GroupFailsAsync(TestBatches.Valid(10), new GroupingOptions { GroupCount = 2, SilhouetteSampleSize = 50_001 });

        Assert.Contains("TopicGroups:Limits:MaxSilhouetteSampleSize", RpcAssert.Single(error, "options.silhouette_sample_size").Description);
    }
}
