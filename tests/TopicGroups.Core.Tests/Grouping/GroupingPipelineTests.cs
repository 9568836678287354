using TopicGroups.Core.Grouping;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.Grouping;

public sealed class GroupingPipelineTests
{
    private const int Dimensions = 16;

    // Three invented themes with distinct vocabulary plus filler every ticket shares.
    private static readonly string[][] ThemeWords =
    [
        ["refund", "charged", "twice", "card", "bank"],
        ["courier", "late", "delivery", "doorstep", "arrived"],
        ["password", "login", "reset", "account", "locked"],
    ];

    [Fact]
    public void Run_ThreeSeparatedThemes_GroupsNumberedBySizeAndDescribed()
    {
        GroupingInput input = ThreeThemes(sizes: [40, 25, 15], seed: 5, out int[] theme);

        GroupingResult result = new GroupingPipeline().Run(input);

        Assert.Equal([1, 2, 3], result.Groups.Select(g => g.Id));
        Assert.Equal([40, 25, 15], result.Groups.Select(g => g.Size));
        // Each theme lands whole in one group (up to renumbering).
        for (int t = 0; t < 3; t++)
        {
            var groupsOfTheme = Enumerable.Range(0, theme.Length).Where(i => theme[i] == t).Select(i => result.Documents[i].GroupId).Distinct();
            Assert.Single(groupsOfTheme);
        }

        Assert.Contains("refund", result.Groups[0].Terms.Select(term => term.Term));
        Assert.Contains("courier", result.Groups[1].Terms.Select(term => term.Term));
        Assert.Contains("password", result.Groups[2].Terms.Select(term => term.Term));
        Assert.DoesNotContain("thanks", result.Groups.SelectMany(g => g.Terms).Select(term => term.Term));
    }

    [Fact]
    public void Run_Placements_AgreeWithCentroidsAndExamples()
    {
        GroupingInput input = ThreeThemes(sizes: [30, 20, 10], seed: 8, out _);
        float[] original = (float[])input.Embeddings.Values.Clone();

        GroupingResult result = new GroupingPipeline().Run(input);

        for (int i = 0; i < result.Documents.Count; i++)
        {
            DocumentPlacement placement = result.Documents[i];
            float[] unit = UnitRow(original, i);
            float own = Dot(unit, result.Centroids, placement.GroupId - 1);
            float runnerUp = Dot(unit, result.Centroids, placement.RunnerUpGroupId - 1);
            Assert.Equal(own, placement.Similarity, 4);
            Assert.Equal(own - runnerUp, placement.Margin, 4);
            Assert.NotEqual(placement.GroupId, placement.RunnerUpGroupId);
            Assert.True(placement.Margin >= 0, $"document {i}: margin {placement.Margin} is negative");
            for (int g = 0; g < result.Groups.Count; g++)
            {
                Assert.True(Dot(unit, result.Centroids, g) <= own + 1e-5f, $"document {i} is closer to group {g + 1}");
            }
        }

        foreach (GroupSummary group in result.Groups)
        {
            float[] memberSimilarities = result.Documents.Where(d => d.GroupId == group.Id).Select(d => d.Similarity).OrderDescending().ToArray();
            Assert.Equal(memberSimilarities.Take(3), group.Examples.Select(e => e.Similarity));
            Assert.Equal(memberSimilarities.Average(), group.Cohesion, 4);
        }

        Assert.Equal(result.Documents.Average(d => (double)d.Similarity), result.Statistics.Objective, 4);
    }

    [Fact]
    public void Run_PlantedStrayDocument_FlaggedAsOutlier()
    {
        GroupingInput clean = ThreeThemes(sizes: [40, 30, 20], seed: 3, out _);
        int n = clean.Embeddings.Rows + 1;
        float[] values = new float[n * Dimensions];
        clean.Embeddings.Values.CopyTo(values, 0);
        // The stray leans slightly towards theme 0 but mostly points along an unused axis.
        values[(n - 1) * Dimensions + 0] = 0.35f;
        values[(n - 1) * Dimensions + 15] = 1f;
        var input = new GroupingInput(
            [.. clean.Ids, "stray"],
            [.. clean.Texts, "hello I would like to apply for a job in your warehouse"],
            new EmbeddingMatrix(values, n, Dimensions),
            clean.Options);

        GroupingResult result = new GroupingPipeline().Run(input);

        Assert.True(result.Documents[^1].IsOutlier);
        Assert.True(result.Documents.Count(d => d.IsOutlier) <= 3);
        Assert.Equal(result.Documents.Count(d => d.IsOutlier), result.Groups.Sum(g => g.OutlierCount));
    }

    [Fact]
    public void Run_SameSeedTwice_IdenticalResult()
    {
        GroupingResult first = new GroupingPipeline().Run(ThreeThemes([30, 20, 10], seed: 21, out _));
        GroupingResult second = new GroupingPipeline().Run(ThreeThemes([30, 20, 10], seed: 21, out _));

        Assert.Equal(first.Documents, second.Documents);
        Assert.Equal(first.Centroids, second.Centroids);
    }

    [Fact]
    public void Run_NegativeExampleCount_ThrowsNamingIt()
    {
        GroupingInput input = ThreeThemes([10, 10, 10], seed: 1, out _);
        var bad = new GroupingInput(input.Ids, input.Texts, input.Embeddings, input.Options with { ExampleCount = -1 });

        var error = Assert.Throws<ArgumentException>(() => new GroupingPipeline().Run(bad));
        Assert.Contains("ExampleCount", error.Message);
    }

    private static GroupingInput ThreeThemes(int[] sizes, int seed, out int[] theme)
    {
        var random = new Random(seed);
        int n = sizes.Sum();
        var values = new float[n * Dimensions];
        var ids = new string[n];
        var texts = new string[n];
        theme = new int[n];
        string[] filler = ["hi", "thanks", "please", "help", "issue", "regards"];
        int row = 0;
        for (int t = 0; t < sizes.Length; t++)
        {
            for (int m = 0; m < sizes[t]; m++, row++)
            {
                theme[row] = t;
                ids[row] = $"doc-{row}";
                // Centre on axis 4t, moderate noise on the first 12 axes.
                for (int j = 0; j < 12; j++)
                {
                    values[row * Dimensions + j] = (float)(0.15 * (random.NextDouble() - 0.5));
                }

                values[row * Dimensions + 4 * t] += 1f;
                string[] words = ThemeWords[t];
                texts[row] = $"{filler[random.Next(filler.Length)]} {words[random.Next(5)]} {words[random.Next(5)]} {words[m % 5]} {filler[random.Next(filler.Length)]}";
            }
        }

        // Interleave so group order in the batch says nothing.
        int[] order = Enumerable.Range(0, n).OrderBy(_ => random.Next()).ToArray();
        var shuffled = new float[values.Length];
        for (int i = 0; i < n; i++)
        {
            Array.Copy(values, order[i] * Dimensions, shuffled, i * Dimensions, Dimensions);
        }

        int[] originalTheme = theme;
        theme = order.Select(i => originalTheme[i]).ToArray();
        return new GroupingInput(
            order.Select(i => ids[i]).ToArray(),
            order.Select(i => texts[i]).ToArray(),
            new EmbeddingMatrix(shuffled, n, Dimensions),
            new GroupingOptions { GroupCount = sizes.Length, Seed = 42, TermCount = 5 });
    }

    private static float[] UnitRow(float[] values, int row)
    {
        float[] unit = values.AsSpan(row * Dimensions, Dimensions).ToArray();
        float norm = MathF.Sqrt(unit.Sum(v => v * v));
        return unit.Select(v => v / norm).ToArray();
    }

    private static float Dot(float[] unit, float[] centroids, int group)
    {
        float sum = 0;
        for (int j = 0; j < Dimensions; j++)
        {
            sum += unit[j] * centroids[group * Dimensions + j];
        }

        return sum;
    }
}
