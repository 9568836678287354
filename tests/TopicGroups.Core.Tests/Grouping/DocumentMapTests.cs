using TopicGroups.Core.Grouping;
using TopicGroups.Core.Tests.TestSupport;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.Grouping;

public sealed class DocumentMapTests
{
    private static GroupingInput Input(EmbeddingMatrix rows, GroupingOptions options) => new(
        Enumerable.Range(0, rows.Rows).Select(i => $"d{i}").ToArray(),
        Enumerable.Range(0, rows.Rows).Select(i => $"text {i}").ToArray(),
        rows,
        options);

    [Fact]
    public void Run_IncludeMapOnThreeSeparatedThemes_EveryDocumentPlacedNearestItsOwnGroupsCentre()
    {
        // Three tight groups in 32 dimensions: their centres span a plane, which the first two principal
        // components recover, so on the map every document sits nearest its own group's centre.
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 11, n: 300, d: 32, trueGroups: 3, noise: 0.05, out _);

        GroupingResult result = new GroupingPipeline().Run(Input(rows, new GroupingOptions { GroupCount = 3, IncludeMap = true }));

        DocumentMap map = Assert.IsType<DocumentMap>(result.Map);
        Assert.Equal(300 * 2, map.Coordinates.Length);
        Assert.Equal(3 * 2, map.GroupCentres.Length);
        Assert.Equal(300, map.FittedDocumentCount);
        Assert.True(map.XVarianceShare >= map.YVarianceShare && map.YVarianceShare > 0.1, $"shares {map.XVarianceShare}, {map.YVarianceShare}");
        Assert.True(map.XVarianceShare + map.YVarianceShare > 0.8, "two axes should hold most of the variance of three tight groups");
        for (int i = 0; i < 300; i++)
        {
            int own = result.Documents[i].GroupId;
            int nearest = Enumerable.Range(1, 3)
                .OrderBy(g => Squared(map.Coordinates[2 * i] - map.GroupCentres[2 * (g - 1)]) + Squared(map.Coordinates[2 * i + 1] - map.GroupCentres[2 * (g - 1) + 1]))
                .First();
            Assert.True(own == nearest, $"document {i} of group {own} is drawn nearest group {nearest}");
        }

        // Each group is drawn at the mean position of its documents.
        for (int g = 1; g <= 3; g++)
        {
            int[] members = Enumerable.Range(0, 300).Where(i => result.Documents[i].GroupId == g).ToArray();
            Assert.Equal(members.Average(i => map.Coordinates[2 * i]), map.GroupCentres[2 * (g - 1)], 4);
            Assert.Equal(members.Average(i => map.Coordinates[2 * i + 1]), map.GroupCentres[2 * (g - 1) + 1], 4);
        }
    }

    [Fact]
    public void Run_WithoutIncludeMap_NoMap()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 2, n: 40, d: 8, trueGroups: 2, noise: 0.05, out _);

        GroupingResult result = new GroupingPipeline().Run(Input(rows, new GroupingOptions { GroupCount = 2 }));

        Assert.Null(result.Map);
    }

    [Fact]
    public void Run_IncludeMapSampledFit_EveryDocumentStillPlaced()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 4, n: 500, d: 16, trueGroups: 4, noise: 0.1, out _);

        GroupingResult result = new GroupingPipeline().Run(Input(rows, new GroupingOptions { GroupCount = 4, IncludeMap = true, MapSampleSize = 100 }));

        DocumentMap map = Assert.IsType<DocumentMap>(result.Map);
        Assert.Equal(100, map.FittedDocumentCount);
        Assert.Equal(1000, map.Coordinates.Length);
        Assert.All(map.Coordinates, value => Assert.True(float.IsFinite(value)));
        // Points of the same batch spread out: not all at the origin.
        Assert.True(map.Coordinates.Select(MathF.Abs).Max() > 0.1f);
    }

    private static float Squared(float value) => value * value;
}
