using TopicGroups.Core.Clustering;
using TopicGroups.Core.Grouping;
using TopicGroups.Core.Tests.Clustering;
using TopicGroups.Core.Tests.TestSupport;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.Grouping;

/// <summary>Quality figures and suggestions through the pipeline (docs/algorithms.md §9).</summary>
public sealed class GroupQualityTests
{
    [Fact]
    public void Run_TwoThemesForcedIntoOneGroup_SuggestsProbablyTwoThemesWithNumbers()
    {
        // Four equal themes, three groups: one group must hold two themes.
        GroupingInput input = Input(TestData.UnitClusters(seed: 31, n: 800, d: 64, trueGroups: 4, noise: 0.08, out int[] theme), groupCount: 3);

        GroupingResult result = new GroupingPipeline().Run(input);

        GroupSummary merged = result.Groups.Single(g => g.Size == 400);
        GroupSuggestion suggestion = Assert.Single(merged.Quality!.Suggestions);
        Assert.Equal(SuggestionKind.ProbablyTwoThemes, suggestion.Kind);
        Assert.Equal([200, 200], suggestion.PartSizes);                       // the split finds the two themes
        Assert.True(suggestion.SplitSilhouette >= GroupQualityDefaults.SplitMinimumSilhouette);
        Assert.True(suggestion.SpreadRemoved >= GroupQualityDefaults.SplitMinimumSpreadRemoved);
        Assert.True(suggestion.SplitCohesion > merged.Cohesion);
        Assert.Contains("probably two themes", suggestion.Message);
        Assert.Contains(merged.Cohesion.ToString("F3", System.Globalization.CultureInfo.InvariantCulture), suggestion.Message);
        Assert.All(result.Groups.Where(g => g != merged), g => Assert.Empty(g.Quality!.Suggestions));
    }

    [Fact]
    public void Run_OneThemeSplitOverTwoGroups_EachSuggestsCloseToTheOther()
    {
        // Three themes, one twice as large as the others, four groups: the large theme is cut in two.
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 32, n: 1000, d: 64, trueGroups: 4, noise: 0.08, out int[] theme);
        CopyDirection(rows, theme, from: 3, to: 0, seed: 32);
        GroupingInput input = Input(rows, groupCount: 4);

        GroupingResult result = new GroupingPipeline().Run(input);

        // The two groups holding theme 0 (now half the batch).
        int[] halves = Enumerable.Range(0, theme.Length).Where(i => theme[i] is 0 or 3).Select(i => result.Documents[i].GroupId).Distinct().Order().ToArray();
        Assert.Equal(2, halves.Length);
        foreach ((int self, int other) in new[] { (halves[0], halves[1]), (halves[1], halves[0]) })
        {
            GroupSummary group = result.Groups.Single(g => g.Id == self);
            GroupSuggestion close = Assert.Single(group.Quality!.Suggestions, s => s.Kind == SuggestionKind.CloseToGroup);
            Assert.Equal(other, close.OtherGroupId);
            Assert.Equal(other, group.Quality.NearestGroupId);
            Assert.True(close.PairSilhouette < GroupQualityDefaults.CloseMaximumPairSilhouette);
            Assert.Equal(group.Quality.NearestCentreSimilarity, close.CentreSimilarity);
            Assert.Contains($"close to group {other}", close.Message);
        }

        Assert.All(result.Groups.Where(g => !halves.Contains(g.Id)), g => Assert.Empty(g.Quality!.Suggestions));
    }

    [Fact]
    public void Run_SeparatedThemesAtTheirCount_NoSuggestionsHighSilhouette()
    {
        GroupingInput input = Input(TestData.UnitClusters(seed: 33, n: 600, d: 64, trueGroups: 5, noise: 0.08, out _), groupCount: 5);

        GroupingResult result = new GroupingPipeline().Run(input);

        Assert.All(result.Groups, g => Assert.Empty(g.Quality!.Suggestions));
        Assert.InRange(result.Quality!.Silhouette, 0.5, 1.0);
        Assert.False(result.Quality.NoStructure);
        Assert.All(result.Groups, g => Assert.InRange(g.Quality!.Silhouette, 0.5, 1.0));
    }

    [Fact]
    public void Run_Quality_NearestGroupIsTheMostSimilarCentre()
    {
        GroupingInput input = Input(TestData.UnitClusters(seed: 34, n: 500, d: 24, trueGroups: 6, noise: 0.4, out _), groupCount: 6);

        GroupingResult result = new GroupingPipeline().Run(input);

        int d = 24;
        foreach (GroupSummary group in result.Groups)
        {
            float[] centre = result.Centroids.AsSpan((group.Id - 1) * d, d).ToArray();
            (int id, double cosine) = result.Groups.Where(o => o.Id != group.Id)
                .Select(o => (o.Id, (double)System.Numerics.Tensors.TensorPrimitives.Dot(centre, result.Centroids.AsSpan((o.Id - 1) * d, d))))
                .MaxBy(pair => pair.Item2);
            Assert.Equal(id, group.Quality!.NearestGroupId);
            Assert.Equal(cosine, group.Quality.NearestCentreSimilarity, 1e-5);
        }

        Assert.Equal(500, result.Groups.Sum(g => g.Quality!.SampledMembers));   // 500 rows ≤ sample size: all scored
        Assert.Equal(500, result.Quality!.SampleSize);
    }

    [Fact]
    public void Run_SampleSmallerThanBatch_GroupSampleCountsAddUpToIt()
    {
        GroupingInput input = Input(
            TestData.UnitClusters(seed: 35, n: 900, d: 16, trueGroups: 3, noise: 0.2, out _), groupCount: 3, silhouetteSampleSize: 250);

        GroupingResult result = new GroupingPipeline().Run(input);

        Assert.Equal(250, result.Quality!.SampleSize);
        Assert.Equal(250, result.Groups.Sum(g => g.Quality!.SampledMembers));
    }

    [Theory]
    [InlineData(64)]
    [InlineData(384)]
    public void Run_AutoOnUniformRandomVectors_QualityAndChoiceSayNoStructure(int d)
    {
        GroupingInput input = Input(GroupCountSearchTests.Uniform(seed: 40 + d, n: 1000, d), groupCount: GroupingDefaults.ChooseGroupCount);

        GroupingResult result = new GroupingPipeline().Run(input);

        Assert.True(result.GroupCountChoice!.NoStructure);
        Assert.True(result.Quality!.NoStructure, $"silhouette {result.Quality.Silhouette:F4}");
        Assert.InRange(result.Quality.Silhouette, -0.05, 0.05);
    }

    [Fact]
    public void Run_Auto_ChoosesTheCountAndTheFinalRunEqualsAFixedRunAtIt()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 36, n: 1200, d: 48, trueGroups: 6, noise: 0.1, out _);
        float[] copy = (float[])rows.Values.Clone();
        var progress = new List<GroupingProgress>();

        GroupingResult auto = new GroupingPipeline().Run(Input(rows, GroupingDefaults.ChooseGroupCount), progress.Add);
        GroupingResult fixedRun = new GroupingPipeline().Run(Input(new EmbeddingMatrix(copy, 1200, 48), groupCount: 6));

        Assert.Equal(6, auto.GroupCountChoice!.ChosenGroupCount);
        Assert.Equal(6, auto.Groups.Count);
        Assert.Equal(fixedRun.Documents.Select(p => p.GroupId), auto.Documents.Select(p => p.GroupId));
        Assert.Equal(fixedRun.Statistics.Objective, auto.Statistics.Objective);
        // One progress event per candidate before the final run's own events.
        Assert.Equal(
            auto.GroupCountChoice.Curve.Select(c => c.GroupCount),
            progress.Where(p => p.Stage == GroupingStage.ChoosingGroupCount).Select(p => p.Iteration).Order());
        Assert.Null(fixedRun.GroupCountChoice);
    }

    [Fact]
    public void Run_AutoOnUnevenGroups_FinalGroupingAsGoodAsTheCurvesPointAndAFixedRun()
    {
        EmbeddingMatrix rows = GroupCountSearchTests.UnevenGroups(seed: 1, out int[] labels);
        var copy = new EmbeddingMatrix((float[])rows.Values.Clone(), rows.Rows, rows.Dimensions);

        GroupingResult auto = new GroupingPipeline().Run(Input(rows, GroupingDefaults.ChooseGroupCount));
        GroupingResult fixedRun = new GroupingPipeline().Run(Input(copy, groupCount: 16));

        Assert.Equal(16, auto.GroupCountChoice!.ChosenGroupCount);
        double curvePoint = auto.GroupCountChoice.Curve.Single(c => c.GroupCount == 16).Silhouette;
        Assert.True(auto.Quality!.Silhouette >= curvePoint - 0.01, $"grouping {auto.Quality.Silhouette:F4}, curve {curvePoint:F4}");
        Assert.True(auto.Statistics.Objective >= fixedRun.Statistics.Objective);
        double nmi = PartitionAgreement.NormalisedMutualInformation(labels, auto.Documents.Select(p => p.GroupId).ToArray());
        Assert.True(nmi > 0.95, $"NMI {nmi:F3}");
    }

    [Fact]
    public void Run_RunnerUpSimilarity_OwnSimilarityMinusMargin()
    {
        GroupingInput input = Input(TestData.UnitClusters(seed: 37, n: 300, d: 16, trueGroups: 4, noise: 0.5, out _), groupCount: 4);

        GroupingResult result = new GroupingPipeline().Run(input);

        Assert.All(result.Documents, p =>
        {
            Assert.Equal(p.Similarity - p.Margin, p.RunnerUpSimilarity, 1e-6f);
            Assert.True(p.RunnerUpSimilarity <= p.Similarity);
        });
    }

    [Fact]
    public void Run_OneGroup_NoNeighbourNoSilhouette()
    {
        GroupingInput input = Input(TestData.UnitClusters(seed: 38, n: 50, d: 8, trueGroups: 1, noise: 0.3, out _), groupCount: 1);

        GroupingResult result = new GroupingPipeline().Run(input);

        GroupQuality quality = Assert.Single(result.Groups).Quality!;
        Assert.Equal(0, quality.NearestGroupId);
        Assert.True(double.IsNaN(quality.NearestCentreSimilarity));
        Assert.True(double.IsNaN(result.Quality!.Silhouette));
        Assert.Equal(0f, result.Documents[0].RunnerUpSimilarity);
    }

    [Fact]
    public void Run_AutoWithRangeBeyondTheBatch_ThrowsNamingMaximum()
    {
        GroupingInput input = Input(
            TestData.UnitClusters(seed: 39, n: 20, d: 8, trueGroups: 2, noise: 0.3, out _), GroupingDefaults.ChooseGroupCount, maximumGroupCount: 25);

        var error = Assert.Throws<ArgumentException>(() => new GroupingPipeline().Run(input));
        Assert.Equal("MaximumGroupCount", error.ParamName);
    }

    [Fact]
    public void SplitInTwo_ScratchReusedAcrossGroups_SameSuggestionsAsFreshCopies()
    {
        // Groups of three sizes, the scratch buffer reused from the largest down; it starts as NaN, so a split that
        // read past its own rows (or a previous group's leftovers) would change or lose its suggestion.
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 35, n: 1200, d: 32, trueGroups: 4, noise: 0.08, out int[] theme);
        int[][] groups =
        [
            Enumerable.Range(0, rows.Rows).Where(i => theme[i] is 0 or 1).ToArray(),
            Enumerable.Range(0, rows.Rows).Where(i => theme[i] is 2 or 3).Take(500).ToArray(),
            Enumerable.Range(0, rows.Rows).Where(i => theme[i] == 2).Take(120).ToArray(),
        ];
        var options = new GroupingOptions { GroupCount = 3, Seed = 7 };
        float[] scratch = new float[groups[0].Length * rows.Dimensions];
        Array.Fill(scratch, float.NaN);

        IReadOnlyList<int> none = [];
        int made = 0;
        for (int g = 0; g < groups.Length; g++)
        {
            GroupSuggestion? fresh = QualityAssessment.SplitInTwo(rows, groups[g], 0.5, g, options, workers: 2, CancellationToken.None);
            GroupSuggestion? reused = QualityAssessment.SplitInTwo(rows, groups[g], 0.5, g, options, workers: 2, CancellationToken.None, scratch);
            Assert.Equal(fresh is null, reused is null);
            if (fresh is not null)
            {
                made++;
                Assert.Equal(fresh with { PartSizes = none }, reused! with { PartSizes = none });
                Assert.Equal(fresh.PartSizes, reused.PartSizes);
            }
        }

        Assert.True(made >= 2, $"{made} of the groups gave a suggestion; the check needs splits to compare");
    }

    [Fact]
    public void OverPrefix_BufferTooShort_ThrowsNamingBuffer()
    {
        var error = Assert.Throws<ArgumentException>(() => EmbeddingMatrix.OverPrefix(new float[10], rows: 3, dimensions: 4));
        Assert.Equal("buffer", error.ParamName);
        EmbeddingMatrix view = EmbeddingMatrix.OverPrefix(new float[20], rows: 3, dimensions: 4);
        Assert.Equal((3, 4), (view.Rows, view.Dimensions));
    }

    private static GroupingInput Input(EmbeddingMatrix rows, int groupCount, int silhouetteSampleSize = 5_000, int maximumGroupCount = 0)
    {
        string[] ids = Enumerable.Range(0, rows.Rows).Select(i => $"doc-{i}").ToArray();
        string[] texts = Enumerable.Repeat("a ticket", rows.Rows).ToArray();
        return new GroupingInput(ids, texts, rows, new GroupingOptions
        {
            GroupCount = groupCount,
            SilhouetteSampleSize = silhouetteSampleSize,
            MaximumGroupCount = maximumGroupCount,
        });
    }

    /// <summary>Moves every row of theme <paramref name="from"/> onto theme <paramref name="to"/>'s direction (fresh noise), doubling that theme.</summary>
    private static void CopyDirection(EmbeddingMatrix rows, int[] theme, int from, int to, int seed)
    {
        int d = rows.Dimensions;
        // The mean of theme "to" estimates its direction well enough for a fresh copy of its rows.
        double[] direction = new double[d];
        for (int i = 0; i < theme.Length; i++)
        {
            if (theme[i] == to)
            {
                for (int p = 0; p < d; p++)
                {
                    direction[p] += rows.Row(i)[p];
                }
            }
        }

        double norm = Math.Sqrt(direction.Sum(v => v * v));
        var random = new SplitMix64((ulong)seed + 1000);
        for (int i = 0; i < theme.Length; i++)
        {
            if (theme[i] != from)
            {
                continue;
            }

            for (int p = 0; p < d; p++)
            {
                rows.Row(i)[p] = (float)(direction[p] / norm + 0.08 * TestData.Gaussian(ref random));
            }
        }

        RowNormalisation.NormaliseInPlace(rows);
    }
}
