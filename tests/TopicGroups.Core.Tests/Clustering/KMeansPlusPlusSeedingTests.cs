using TopicGroups.Core.Clustering;
using TopicGroups.Core.Tests.TestSupport;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.Clustering;

public sealed class KMeansPlusPlusSeedingTests
{
    private const int TrueGroups = 12;
    private const int Dimensions = 64;

    /// <summary>
    /// Uneven groups (sizes ∝ 1 / rank, 600 rows for the largest) with heavy noise, like embeddings: rows of one
    /// group have cosine about 0.3 with each other and about 0 with other groups, so D-weighted draws prefer
    /// uncovered groups only mildly and plain k-means++ often doubles up in the big groups.
    /// </summary>
    private static (EmbeddingMatrix Rows, int[] Labels) UnevenNoisyGroups()
    {
        EmbeddingMatrix all = TestData.UnitClusters(seed: 99, n: 600 * TrueGroups, d: Dimensions, trueGroups: TrueGroups, noise: 0.2, out int[] labels);
        var kept = new List<int>();
        for (int g = 0; g < TrueGroups; g++)
        {
            int size = 600 / (g + 1);
            kept.AddRange(Enumerable.Range(0, all.Rows).Where(i => labels[i] == g).Take(size));
        }

        kept.Sort();
        var rows = EmbeddingMatrix.Allocate(kept.Count, Dimensions);
        for (int r = 0; r < kept.Count; r++)
        {
            all.Row(kept[r]).CopyTo(rows.Row(r));
        }

        return (rows, kept.Select(i => labels[i]).ToArray());
    }

    private static (double Objective, float[] Seeds) Seed(EmbeddingMatrix rows, int candidates, ulong seed, int workers)
    {
        var pool = new SeedingPool(rows.Values, rows.Rows, rows.Dimensions, TrueGroups, workers, sample: false, maxCandidates: candidates);
        float[] seeds = new float[TrueGroups * rows.Dimensions];
        SplitMix64 random = SplitMix64.ForStream(seed, 0);
        double objective = KMeansPlusPlusSeeding.Seed(pool, seeds, TrueGroups, candidates, ref random, CancellationToken.None);
        return (objective, seeds);
    }

    [Fact]
    public void Seed_GreedyCandidates_HigherSeedingObjectiveThanPlainOverEightSeeds()
    {
        (EmbeddingMatrix rows, _) = UnevenNoisyGroups();
        int candidates = KMeansPlusPlusSeeding.DefaultCandidates(TrueGroups);

        double plain = 0;
        double greedy = 0;
        for (ulong seed = 1; seed <= 8; seed++)
        {
            plain += Seed(rows, 1, seed, workers: 2).Objective;
            greedy += Seed(rows, candidates, seed, workers: 2).Objective;
        }

        // Greedy keeps, among its candidates, the one that lowers Σ D most: its mean cosine to the nearest seed is higher.
        Assert.True(greedy > plain, $"greedy {greedy / 8} <= plain {plain / 8}");
    }

    [Theory]
    [InlineData(1)]
    [InlineData(4)]
    public void Seed_OneOrSeveralThreads_IdenticalSeeds(int candidates)
    {
        (EmbeddingMatrix rows, _) = UnevenNoisyGroups();

        (double oneObjective, float[] one) = Seed(rows, candidates, seed: 3, workers: 1);
        (double threeObjective, float[] three) = Seed(rows, candidates, seed: 3, workers: 3);

        Assert.True(one.SequenceEqual(three), $"seeds differ between 1 and 3 threads with {candidates} candidates (seed 3)");
        Assert.Equal(oneObjective, threeObjective);
    }

    [Fact]
    public void Seed_Greedy_SeedsAreDistinctPoolRows()
    {
        (EmbeddingMatrix rows, _) = UnevenNoisyGroups();

        (_, float[] seeds) = Seed(rows, KMeansPlusPlusSeeding.DefaultCandidates(TrueGroups), seed: 5, workers: 2);

        var seen = new HashSet<int>();
        for (int c = 0; c < TrueGroups; c++)
        {
            float[] centre = seeds.AsSpan(c * Dimensions, Dimensions).ToArray();
            int row = Enumerable.Range(0, rows.Rows).First(i => rows.Row(i).SequenceEqual(centre));
            Assert.True(seen.Add(row), $"seed {c} repeats row {row}");
        }
    }

    [Theory]
    [InlineData(1, 1)]
    [InlineData(2, 2)]
    [InlineData(100, 6)]
    [InlineData(200, 7)]
    public void DefaultCandidates_TwoPlusFloorLogK(int k, int expected) =>
        Assert.Equal(expected, KMeansPlusPlusSeeding.DefaultCandidates(k));
}
