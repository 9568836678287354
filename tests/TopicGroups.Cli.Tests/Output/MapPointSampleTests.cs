using TopicGroups.Cli.Output;

namespace TopicGroups.Cli.Tests.Output;

public sealed class MapPointSampleTests
{
    private static int[] Groups(params int[] sizes) =>
        sizes.SelectMany((size, g) => Enumerable.Repeat(g, size)).ToArray();

    [Fact]
    public void Select_FewerDocumentsThanLimit_Everyone()
    {
        Assert.Equal([0, 1, 2, 3], MapPointSample.Select(Groups(3, 1), groupCount: 2, limit: 10));
    }

    [Fact]
    public void Select_LargeAndSmallGroups_LimitKeptSharesKeptSmallGroupWhole()
    {
        int[] groupOf = Groups(5000, 3000, 10);

        int[] chosen = MapPointSample.Select(groupOf, groupCount: 3, limit: 800);

        Assert.Equal(800, chosen.Length);
        Assert.Equal(chosen.Order().Distinct(), chosen);
        int[] perGroup = [.. Enumerable.Range(0, 3).Select(g => chosen.Count(i => groupOf[i] == g))];
        Assert.Equal(10, perGroup[2]);                           // the small group is drawn whole
        Assert.InRange(perGroup[0] / (double)perGroup[1], 1.55, 1.78);   // 5000 : 3000 kept (5/3 = 1.67)
    }

    [Fact]
    public void Select_SameInputTwice_SamePoints()
    {
        int[] groupOf = [.. Enumerable.Range(0, 10_000).Select(i => i * 7 % 13)];

        Assert.Equal(MapPointSample.Select(groupOf, 13, 500), MapPointSample.Select(groupOf, 13, 500));
    }

    [Fact]
    public void Select_MoreGroupsThanFloorsFit_StillAtMostTheLimitAndEveryGroupShown()
    {
        int[] groupOf = [.. Enumerable.Range(0, 20_000).Select(i => i % 400)];

        int[] chosen = MapPointSample.Select(groupOf, 400, 1000);

        Assert.True(chosen.Length <= 1000, $"{chosen.Length} points");
        Assert.Equal(400, chosen.Select(i => groupOf[i]).Distinct().Count());
    }
}
