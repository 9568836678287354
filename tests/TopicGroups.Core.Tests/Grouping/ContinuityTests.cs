using TopicGroups.Core.Clustering;
using TopicGroups.Core.Grouping;
using TopicGroups.Core.Tests.TestSupport;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.Grouping;

public sealed class ContinuityTests
{
    private const int Dimensions = 32;

    // Invented support themes of a made-up bicycle-rental scheme, one direction each.
    private static readonly string[][] ThemeWords =
    [
        ["dock", "full", "station"],
        ["refund", "charge", "deposit"],
        ["brake", "chain", "repair"],
        ["app", "login", "crash"],
        ["helmet", "lost", "found"],
        ["membership", "annual", "renewal"],
        ["ebike", "battery", "range"],
    ];

    /// <summary>Theme directions shared by every batch of a test (seeded), so batches can be compared.</summary>
    private static float[] Directions(int seed)
    {
        var random = new SplitMix64((ulong)seed);
        float[] directions = new float[ThemeWords.Length * Dimensions];
        for (int i = 0; i < directions.Length; i++)
        {
            directions[i] = (float)TestData.Gaussian(ref random);
        }

        RowNormalisation.NormaliseInPlace(new EmbeddingMatrix(directions, ThemeWords.Length, Dimensions));
        return directions;
    }

    /// <summary>perTheme[t] documents of theme t (skipped when 0), noisy around its direction, in shuffled order.</summary>
    private static (GroupingInput Input, int[] Themes) Batch(
        float[] directions, int[] perTheme, int seed, double noise, GroupingOptions options, Func<int, string[]>? words = null)
    {
        var random = new SplitMix64((ulong)seed);
        var themes = new List<int>();
        for (int t = 0; t < perTheme.Length; t++)
        {
            themes.AddRange(Enumerable.Repeat(t, perTheme[t]));
        }

        int[] order = themes.ToArray();
        for (int i = order.Length - 1; i > 0; i--)
        {
            int j = random.NextInt(i + 1);
            (order[i], order[j]) = (order[j], order[i]);
        }

        int n = order.Length;
        var matrix = EmbeddingMatrix.Allocate(n, Dimensions);
        var texts = new string[n];
        for (int i = 0; i < n; i++)
        {
            int t = order[i];
            for (int p = 0; p < Dimensions; p++)
            {
                matrix.Row(i)[p] = (float)(directions[t * Dimensions + p] + noise * TestData.Gaussian(ref random));
            }

            string[] own = (words ?? (theme => ThemeWords[theme]))(t);
            texts[i] = $"hello {own[random.NextInt(own.Length)]} {own[random.NextInt(own.Length)]} thanks {own[random.NextInt(own.Length)]}";
        }

        var ids = Enumerable.Range(0, n).Select(i => $"doc-{seed}-{i}").ToArray();
        return (new GroupingInput(ids, texts, matrix, options), order);
    }

    private static int GroupOfTheme(GroupingResult result, int[] themes, int theme) =>
        result.Documents.Where((_, i) => themes[i] == theme).GroupBy(p => p.GroupId).OrderByDescending(g => g.Count()).First().Key;

    [Fact]
    public void Apply_SameBatchShuffledOtherSeed_AtLeast95PercentKeepTheirThemeId()
    {
        // Overlapping themes (noise 0.25 per coordinate in 32 dimensions: cosine to the own direction ≈ 0.7),
        // grouped once, saved, then the same documents in another order with another seed.
        float[] directions = Directions(seed: 11);
        int[] sizes = [300, 250, 200, 150, 120, 100, 80];
        var options = new GroupingOptions { GroupCount = 7, Seed = 1 };
        var (first, _) = Batch(directions, sizes, seed: 21, noise: 0.25, options);
        string[] ids = first.Ids.ToArray();
        float[] values = (float[])first.Embeddings.Values.Clone();
        GroupingResult before = new GroupingPipeline().Run(first);
        GroupingSnapshot reference = GroupingSnapshot.Capture(before, options);

        // The same rows in a seeded random order, grouped with another seed.
        int n = ids.Length;
        int[] permutation = Enumerable.Range(0, n).OrderBy(i => (i * 7919L + 13) % 10007).ToArray();
        var shuffled = EmbeddingMatrix.Allocate(n, Dimensions);
        for (int i = 0; i < n; i++)
        {
            values.AsSpan(permutation[i] * Dimensions, Dimensions).CopyTo(shuffled.Row(i));
        }

        var second = new GroupingInput(
            permutation.Select(i => ids[i]).ToArray(), permutation.Select(i => first.Texts[i]).ToArray(), shuffled, options with { Seed = 99 });
        GroupingResult after = new GroupingPipeline().Run(second);

        ContinuityResult continued = Continuity.Apply(after, reference, ContinuityDefaults.MinimumMatchSimilarity);

        var idBefore = before.Documents.ToDictionary(p => p.DocumentId, p => p.GroupId);
        int same = continued.Result.Documents.Count(p => idBefore[p.DocumentId] == p.GroupId);
        Assert.True(same >= 0.95 * n, $"{same} of {n} documents kept their theme id");
        Assert.All(continued.Changes.Themes, t => Assert.Equal(ThemeChangeKind.Continued, t.Kind));
        Assert.Equal(before.Groups.Select(g => g.Id).Order(), continued.Result.Groups.Select(g => g.Id).Order());
    }

    [Fact]
    public void Apply_OneThemeNewOneFaded_ReportsContinuedNewAndFadedWithStableIds()
    {
        float[] directions = Directions(seed: 12);
        var options = new GroupingOptions { GroupCount = 5, Seed = 3 };
        // Last week: themes 0-4. This week: theme 4 is gone, theme 6 (e-bike batteries) arrived, theme 0 doubled.
        var (lastWeek, lastThemes) = Batch(directions, [100, 80, 60, 50, 40, 0, 0], seed: 31, noise: 0.1, options);
        GroupingResult before = new GroupingPipeline().Run(lastWeek);
        GroupingSnapshot reference = GroupingSnapshot.Capture(before, options);
        var (thisWeek, thisThemes) = Batch(directions, [200, 80, 60, 50, 0, 0, 70], seed: 32, noise: 0.1, options);
        GroupingResult after = new GroupingPipeline().Run(thisWeek);

        ContinuityResult continued = Continuity.Apply(after, reference, ContinuityDefaults.MinimumMatchSimilarity);
        GroupingResult relabelled = continued.Result;
        ChangeReport report = continued.Changes;

        // Themes 0-3 keep last week's ids; the new theme gets 6 (above the highest, 5); theme 4's id has faded.
        for (int t = 0; t < 4; t++)
        {
            Assert.Equal(GroupOfTheme(before, lastThemes, t), GroupOfTheme(relabelled, thisThemes, t));
        }

        int fadedId = GroupOfTheme(before, lastThemes, 4);
        Assert.Equal(6, GroupOfTheme(relabelled, thisThemes, 6));
        Assert.Equal(
            [ThemeChangeKind.Continued, ThemeChangeKind.Continued, ThemeChangeKind.Continued, ThemeChangeKind.Continued, ThemeChangeKind.New, ThemeChangeKind.Faded],
            report.Themes.Select(t => t.Kind));
        ThemeChange doubled = report.Themes[0];
        Assert.Equal((100, 200), (doubled.SizeThen, doubled.SizeNow));
        Assert.True(doubled.CentreSimilarity > 0.95, $"centre cosine {doubled.CentreSimilarity}");
        ThemeChange arrived = report.Themes[4];
        Assert.Equal((6, 0, 70), (arrived.GroupId, arrived.SizeThen, arrived.SizeNow));
        Assert.Contains("battery", arrived.Terms);
        ThemeChange gone = report.Themes[5];
        Assert.Equal((fadedId, 40, 0), (gone.GroupId, gone.SizeThen, gone.SizeNow));
        Assert.Contains("helmet", gone.Terms);
        Assert.Equal(6, continued.HighestGroupId);
        Assert.Equal((330, 460), (report.ReferenceDocumentCount, report.DocumentCount));

        // Placements, runner-ups, quality figures and groups all use the new ids; centres stay with their groups.
        var groupIds = relabelled.Groups.Select(g => g.Id).ToHashSet();
        Assert.All(relabelled.Documents, p => Assert.Contains(p.GroupId, groupIds));
        Assert.All(relabelled.Documents, p => Assert.Contains(p.RunnerUpGroupId, groupIds));
        var newIdOfOld = after.Groups.Select((g, i) => (g.Id, relabelled.Groups[i].Id)).ToDictionary();
        for (int i = 0; i < after.Groups.Count; i++)
        {
            Assert.Equal(newIdOfOld[after.Groups[i].Quality!.NearestGroupId], relabelled.Groups[i].Quality!.NearestGroupId);
        }
        Assert.Equal(after.Centroids, relabelled.Centroids);
        Assert.Equal(after.Groups.Select(g => g.Size), relabelled.Groups.Select(g => g.Size));
    }

    [Fact]
    public void Apply_VocabularyShifted_TermsThatRoseAndFell()
    {
        float[] directions = Directions(seed: 13);
        var options = new GroupingOptions { GroupCount = 2, Seed = 3, TermCount = 3 };
        var (before, _) = Batch(directions, [60, 60], seed: 41, noise: 0.1, options,
            theme => theme == 0 ? ["dock", "full", "station"] : ThemeWords[theme]);
        var (after, _) = Batch(directions, [60, 60], seed: 42, noise: 0.1, options,
            theme => theme == 0 ? ["dock", "full", "closed"] : ThemeWords[theme]);
        GroupingResult resultBefore = new GroupingPipeline().Run(before);

        ContinuityResult continued = Continuity.Apply(
            new GroupingPipeline().Run(after), GroupingSnapshot.Capture(resultBefore, options), ContinuityDefaults.MinimumMatchSimilarity);

        ThemeChange docks = continued.Changes.Themes.Single(t => t.Terms.Contains("dock"));
        Assert.Equal(["closed"], docks.TermsRose);
        Assert.Equal(["station"], docks.TermsFell);
        ThemeChange refunds = continued.Changes.Themes.Single(t => t.Terms.Contains("refund"));
        Assert.Empty(refunds.TermsRose);
        Assert.Empty(refunds.TermsFell);
    }

    [Fact]
    public void Apply_NoCentreSimilarEnough_AllNewAboveHighestIdAndAllFaded()
    {
        float[] directions = Directions(seed: 14);
        var options = new GroupingOptions { GroupCount = 2, Seed = 3 };
        var (before, _) = Batch(directions, [50, 50, 0, 0], seed: 51, noise: 0.1, options);
        var (after, _) = Batch(directions, [0, 0, 50, 50], seed: 52, noise: 0.1, options);
        // The reference's line once reached id 9 (themes since faded): new ids start at 10.
        GroupingSnapshot reference = GroupingSnapshot.Capture(new GroupingPipeline().Run(before), options, highestGroupId: 9);

        ContinuityResult continued = Continuity.Apply(new GroupingPipeline().Run(after), reference, ContinuityDefaults.MinimumMatchSimilarity);

        Assert.Equal([10, 11], continued.Result.Groups.Select(g => g.Id).Order());
        Assert.Equal(2, continued.Changes.Themes.Count(t => t.Kind == ThemeChangeKind.New));
        Assert.Equal([1, 2], continued.Changes.Themes.Where(t => t.Kind == ThemeChangeKind.Faded).Select(t => t.GroupId).Order());
        Assert.All(continued.Changes.Themes, t => Assert.True(t.CentreSimilarity < ContinuityDefaults.MinimumMatchSimilarity));
        Assert.All(continued.Changes.Themes, t => Assert.NotEqual(0, t.ClosestGroupId));
        Assert.Equal(11, continued.HighestGroupId);
    }

    [Fact]
    public void Apply_MoreGroupsThanReference_ExtraGroupsAreNew()
    {
        float[] directions = Directions(seed: 15);
        var (before, _) = Batch(directions, [80, 80, 80], seed: 61, noise: 0.1, new GroupingOptions { GroupCount = 3 });
        var (after, _) = Batch(directions, [80, 80, 80, 80, 80], seed: 62, noise: 0.1, new GroupingOptions { GroupCount = 5 });
        GroupingSnapshot reference = GroupingSnapshot.Capture(new GroupingPipeline().Run(before), before.Options);

        ContinuityResult continued = Continuity.Apply(new GroupingPipeline().Run(after), reference, ContinuityDefaults.MinimumMatchSimilarity);

        Assert.Equal([1, 2, 3, 4, 5], continued.Result.Groups.Select(g => g.Id).Order());
        Assert.Equal(3, continued.Changes.Themes.Count(t => t.Kind == ThemeChangeKind.Continued));
        Assert.Equal([4, 5], continued.Changes.Themes.Where(t => t.Kind == ThemeChangeKind.New).Select(t => t.GroupId).Order());
        Assert.DoesNotContain(continued.Changes.Themes, t => t.Kind == ThemeChangeKind.Faded);
    }

    [Fact]
    public void Apply_BadMinimumOrDimensions_ThrowsNamingIt()
    {
        float[] directions = Directions(seed: 16);
        var (batch, _) = Batch(directions, [20, 20], seed: 71, noise: 0.1, new GroupingOptions { GroupCount = 2 });
        GroupingResult result = new GroupingPipeline().Run(batch);
        GroupingSnapshot reference = GroupingSnapshot.Capture(result, batch.Options);

        Assert.Contains("minimumMatchSimilarity", Assert.Throws<ArgumentException>(() => Continuity.Apply(result, reference, 0)).Message);
        Assert.Contains("minimumMatchSimilarity", Assert.Throws<ArgumentException>(() => Continuity.Apply(result, reference, 1.5)).Message);
        var otherModel = reference with { Dimensions = 16, Centroids = new float[2 * 16] };
        Assert.Contains("16", Assert.Throws<ArgumentException>(() => Continuity.Apply(result, otherModel, 0.8)).Message);
    }

    [Fact]
    public void Run_WarmStartFromReferenceCentres_ReachesTheSamePartitionInOneRestart()
    {
        float[] directions = Directions(seed: 17);
        var options = new GroupingOptions { GroupCount = 6, Seed = 5, MaxIterations = 200 };
        var (batch, _) = Batch(directions, [120, 100, 90, 80, 70, 60], seed: 81, noise: 0.25, options);
        float[] values = (float[])batch.Embeddings.Values.Clone();
        GroupingResult before = new GroupingPipeline().Run(batch);
        GroupingSnapshot reference = GroupingSnapshot.Capture(before, options);

        var again = new GroupingInput(batch.Ids, batch.Texts, new EmbeddingMatrix(values, batch.Ids.Count, Dimensions),
            options with { Seed = 77, RestartCount = 1, InitialCentroids = reference.Centroids });
        GroupingResult warm = new GroupingPipeline().Run(again);

        // Started at a fixed point of the iterations, the run stays there: same partition, objective and (after
        // continuity) the same ids for every document.
        Assert.Equal(before.Statistics.Objective, warm.Statistics.Objective, 6);
        ContinuityResult continued = Continuity.Apply(warm, reference, ContinuityDefaults.MinimumMatchSimilarity);
        Assert.Equal(before.Documents.Select(p => p.GroupId), continued.Result.Documents.Select(p => p.GroupId));
        Assert.True(warm.Statistics.Iterations <= 2, $"{warm.Statistics.Iterations} iterations from a converged start");
    }

    [Fact]
    public void Fit_InitialCentroidsOfWrongShape_ThrowsNamingTheShape()
    {
        EmbeddingMatrix unit = TestData.UnitClusters(seed: 1, n: 20, d: 4, trueGroups: 2, noise: 0.1, out _);
        var exception = Assert.Throws<ArgumentException>(() =>
            SphericalKMeans.Fit(unit, new SphericalKMeansOptions { GroupCount = 2, InitialCentroids = new float[7] }));
        Assert.Contains("2 × 4", exception.Message);
    }
}
