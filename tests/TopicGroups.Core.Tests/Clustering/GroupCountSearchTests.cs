using TopicGroups.Core.Clustering;
using TopicGroups.Core.Tests.TestSupport;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.Clustering;

public sealed class GroupCountSearchTests
{
    [Theory]
    [InlineData(4, 11)]
    [InlineData(7, 12)]
    [InlineData(13, 13)]
    public void Search_WellSeparatedGroups_ChoosesTheirCount(int trueGroups, int seed)
    {
        // Equal-sized groups around random directions in 64 dimensions; cosine to own direction about 0.8.
        EmbeddingMatrix rows = TestData.UnitClusters(seed, n: 1500, d: 64, trueGroups, noise: 0.08, out _);

        GroupCountSearchResult result = GroupCountSearch.Search(rows, new GroupCountSearchOptions { Seed = (ulong)seed });

        Assert.True(trueGroups == result.ChosenGroupCount, $"seed {seed}: chose {result.ChosenGroupCount}, curve {Curve(result)}");
        Assert.Equal(GroupCountChoiceReason.HighestSilhouette, result.Reason);
        Assert.False(result.NoStructure);
        Assert.Equal((2, 27), (result.MinimumGroupCount, result.MaximumGroupCount)); // default range for 1,500 rows: 2..⌊√750⌋
    }

    [Theory]
    [InlineData(1)]
    [InlineData(2)]
    public void Search_UnevenGroupsSharingADirection_FindsTheirCount(int seed)
    {
        // 16 groups of 40 to 1,183 rows whose centres share a direction (pairwise cosine about 0.3), rows at cosine
        // about 0.5 to their centre. k-means++ alone puts two centres into large groups and merges small ones, so
        // high counts were under-scored: without the split-merge moves (and with the former 0.01 tie tolerance) this
        // search chose 5 (seed 1) and 8 (seed 2).
        EmbeddingMatrix rows = UnevenGroups(seed, out _);

        GroupCountSearchResult result = GroupCountSearch.Search(rows, new GroupCountSearchOptions());

        Assert.True(result.ChosenGroupCount == 16, $"seed {seed}: chose {result.ChosenGroupCount}, curve {Curve(result)}");
        Assert.False(result.NoStructure);
    }

    [Fact]
    public void Search_EveryCandidate_ScoresAtLeastAsWellAsAFullFitAtItsCount()
    {
        // A full fit = the final grouping's default settings (4 restarts, 50 iterations); the candidates' cheaper
        // settings plus moves must not under-score a count, or the curve would mislead the choice.
        EmbeddingMatrix rows = UnevenGroups(seed: 1, out _);
        GroupCountSearchResult result = GroupCountSearch.Search(rows, new GroupCountSearchOptions());
        int[] everyRow = Enumerable.Range(0, rows.Rows).ToArray();     // fewer rows than the sample size: all are scored

        foreach (GroupCountCandidate candidate in result.Curve.Where(c => c.GroupCount >= 5))
        {
            ClusteringResult full = SphericalKMeans.Fit(rows, new SphericalKMeansOptions { GroupCount = candidate.GroupCount });
            double fullSilhouette = Silhouette.Compute(rows, full.Assignments, candidate.GroupCount, everyRow, workerCount: 1).Mean;
            Assert.True(
                candidate.Silhouette >= fullSilhouette - 0.01,
                FormattableString.Invariant($"k = {candidate.GroupCount}: candidate {candidate.Silhouette:F4}, full fit {fullSilhouette:F4}"));
        }
    }

    [Fact]
    public void Search_TrueCountFound_CandidateRecoversTheTrueGroups()
    {
        EmbeddingMatrix rows = UnevenGroups(seed: 2, out int[] labels);
        GroupCountSearchResult result = GroupCountSearch.Search(rows, new GroupCountSearchOptions());
        Assert.Equal(16, result.ChosenGroupCount);

        int[] assignments = new int[rows.Rows];
        NearestCentroid.Assign(rows, result.ChosenCentroids, assignments);

        double nmi = PartitionAgreement.NormalisedMutualInformation(labels, assignments);
        Assert.True(nmi > 0.95, $"NMI {nmi:F3}");
        Assert.True(result.Curve.Sum(c => c.Moves) > 0, "no move was kept: the data no longer exercises the moves");
    }

    [Theory]
    [InlineData(16)]
    [InlineData(64)]
    [InlineData(384)]
    public void Search_UniformRandomUnitVectors_SaysNoStructure(int d)
    {
        EmbeddingMatrix rows = Uniform(seed: 21 + d, n: 1200, d);

        GroupCountSearchResult result = GroupCountSearch.Search(rows, new GroupCountSearchOptions());

        Assert.True(result.NoStructure, $"d = {d}: best {result.BestSilhouette:F4} vs threshold {result.NoStructureThreshold:F4}, curve {Curve(result)}");
        Assert.Equal(GroupCountChoiceReason.NoStructure, result.Reason);
        Assert.StartsWith("No clear structure", result.Explanation);
        Assert.Equal(result.MinimumGroupCount, result.ChosenGroupCount);     // no themes: the fewest arbitrary cuts
        Assert.Equal(GroupCountSearch.CoarseGrid(2, result.MaximumGroupCount, GroupCountSearchDefaults.CoarsePoints).Length, result.Curve.Count);
        // Near zero indeed: about 1.5 / d for uniform vectors (docs/algorithms.md §8).
        Assert.InRange(result.BestSilhouette, -0.05, 3.0 / d);
    }

    [Fact]
    public void Choose_WithinToleranceOfBest_SmallestSuchCount()
    {
        GroupCountCandidate[] curve = [Candidate(2, 0.300), Candidate(3, 0.295), Candidate(5, 0.310), Candidate(8, 0.250)];

        (int chosen, int best, double bestSilhouette) = GroupCountSearch.Choose(curve, tolerance: 0.01);

        Assert.Equal(2, chosen);            // 0.300 ≥ 0.310 − 0.01: a near-tie goes to fewer groups
        Assert.Equal(5, best);
        Assert.Equal(0.310, bestSilhouette);
    }

    [Fact]
    public void Choose_SmallerCountsBelowTolerance_Best()
    {
        GroupCountCandidate[] curve = [Candidate(2, 0.280), Candidate(3, 0.299), Candidate(5, 0.310), Candidate(8, 0.305)];

        Assert.Equal(5, GroupCountSearch.Choose(curve, tolerance: 0.01).Chosen);
    }

    [Fact]
    public void Choose_NoFixedTolerance_OneStandardErrorOfTheBest()
    {
        // The best (5: 0.310 ± 0.004) reaches down to 0.306: 3 (0.307) is within, 2 (0.300) is not.
        GroupCountCandidate[] curve =
        [
            Candidate(2, 0.300) with { SilhouetteStandardError = 0.02 },
            Candidate(3, 0.307) with { SilhouetteStandardError = 0.001 },
            Candidate(5, 0.310) with { SilhouetteStandardError = 0.004 },
            Candidate(8, 0.250),
        ];

        Assert.Equal((3, 5, 0.310), GroupCountSearch.Choose(curve, tolerance: null));
    }

    [Fact]
    public void Explanation_NearTieByStandardError_SaysWhichMargin()
    {
        // The figures of gen.py M (100,000 × 384): 39 chosen at 0.241, 40 best at 0.242, one standard error 0.0016.
        var result = new GroupCountSearchResult
        {
            MinimumGroupCount = 2,
            MaximumGroupCount = 40,
            Curve = [Candidate(38, 0.238), Candidate(39, 0.241), Candidate(40, 0.242)],
            ChosenGroupCount = 39,
            BestGroupCount = 40,
            BestSilhouette = 0.242,
            Reason = GroupCountChoiceReason.NearTieFewerGroups,
            NoStructureThreshold = 0.05,
            TieTolerance = 0.0016,
            TieToleranceIsStandardError = true,
            CandidateRows = 25_000,
            SampleSize = 5_000,
            Elapsed = TimeSpan.FromSeconds(1),
        };

        Assert.Equal(
            "39 groups: mean silhouette 0.241, within 0.0016 (one standard error) of the highest (0.242 at 40 groups); "
            + "near-ties go to fewer groups (3 counts tried from 2 to 40).",
            result.Explanation);
    }

    [Fact]
    public void Choose_ExactTie_FewerGroups()
    {
        GroupCountCandidate[] curve = [Candidate(9, 0.2), Candidate(4, 0.2)];

        Assert.Equal((4, 4, 0.2), GroupCountSearch.Choose(curve, tolerance: 0));
    }

    [Fact]
    public void Search_NearTie_FewerGroupsWithinToleranceOnly()
    {
        // Two tight pairs of groups: 2 groups (the pairs) and 4 groups (each group) both score well; 4 best.
        EmbeddingMatrix rows = PairsOfGroups(seed: 4, n: 1200, d: 32);
        GroupCountSearchResult strict = GroupCountSearch.Search(rows, new GroupCountSearchOptions { MaximumGroupCount = 8, TieTolerance = 0 });
        Assert.True(strict.BestGroupCount == 4, $"curve {Curve(strict)}");
        Assert.Equal(4, strict.ChosenGroupCount);
        double gap = strict.BestSilhouette - strict.Curve.Single(c => c.GroupCount == 2).Silhouette;
        Assert.True(gap > 0.005, $"curve {Curve(strict)}");

        GroupCountSearchResult lenient = GroupCountSearch.Search(rows, new GroupCountSearchOptions { MaximumGroupCount = 8, TieTolerance = gap + 1e-9 });
        GroupCountSearchResult justShort = GroupCountSearch.Search(rows, new GroupCountSearchOptions { MaximumGroupCount = 8, TieTolerance = gap - 1e-3 });

        Assert.Equal(2, lenient.ChosenGroupCount);
        Assert.Equal(GroupCountChoiceReason.NearTieFewerGroups, lenient.Reason);
        Assert.Contains("near-ties go to fewer groups", lenient.Explanation);
        Assert.Contains("at 4 groups", lenient.Explanation);
        Assert.NotEqual(2, justShort.ChosenGroupCount);
    }

    [Fact]
    public void Search_LongRange_TriesFarFewerCountsThanTheRangeHolds()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 8, n: 4000, d: 32, trueGroups: 9, noise: 0.1, out _);

        GroupCountSearchResult result = GroupCountSearch.Search(rows, new GroupCountSearchOptions { MinimumGroupCount = 2, MaximumGroupCount = 40 });

        Assert.Equal(9, result.ChosenGroupCount);
        Assert.InRange(result.Curve.Count, 8, 20);      // of 39 counts
        int[] tried = result.Curve.Select(c => c.GroupCount).ToArray();
        Assert.Equal(tried.Order(), tried);
        Assert.Contains(8, tried);                       // the choice was refined down to its neighbours
        Assert.Contains(10, tried);
        Assert.Contains(2, tried);
        Assert.Contains(40, tried);
    }

    [Fact]
    public void Search_SameSeedOneOrTwoThreads_SameCurve()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 2, n: 1000, d: 24, trueGroups: 5, noise: 0.25, out _);

        GroupCountSearchResult one = GroupCountSearch.Search(rows, new GroupCountSearchOptions { Seed = 3, MaxDegreeOfParallelism = 1 });
        GroupCountSearchResult two = GroupCountSearch.Search(rows, new GroupCountSearchOptions { Seed = 3, MaxDegreeOfParallelism = 2 });

        Assert.Equal(one.Curve.Select(c => (c.GroupCount, c.Silhouette, c.Objective)), two.Curve.Select(c => (c.GroupCount, c.Silhouette, c.Objective)));
        Assert.Equal(one.ChosenGroupCount, two.ChosenGroupCount);
    }

    [Fact]
    public void Search_MoreRowsThanCandidateLimit_CandidatesOnSubsetSampleWithinIt()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 6, n: 3000, d: 16, trueGroups: 3, noise: 0.1, out _);

        GroupCountSearchResult result = GroupCountSearch.Search(
            rows, new GroupCountSearchOptions { CandidateRowLimit = 900, SilhouetteSampleSize = 400, MaximumGroupCount = 6 });

        Assert.Equal(900, result.CandidateRows);
        Assert.Equal(400, result.SampleSize);
        Assert.Equal(3, result.ChosenGroupCount);
    }

    [Fact]
    public void CoarseGrid_TwoToForty_GeometricWithBothEnds()
    {
        int[] grid = GroupCountSearch.CoarseGrid(2, 40, points: 8);

        Assert.Equal([2, 3, 5, 7, 11, 17, 26, 40], grid);
    }

    [Fact]
    public void CoarseGrid_ShortRange_EveryCount()
    {
        Assert.Equal([3, 4, 5, 6, 7, 8, 9, 10, 11, 12], GroupCountSearch.CoarseGrid(3, 12, points: 8));
    }

    [Theory]
    [InlineData(3, 2, 2)]
    [InlineData(681, 2, 18)]
    [InlineData(3_200, 2, 40)]
    [InlineData(100_000, 2, 40)]
    public void DefaultRange_ScalesWithRows(int rows, int minimum, int maximum)
    {
        Assert.Equal((minimum, maximum), GroupCountSearchOptions.DefaultRange(rows));
    }

    [Theory]
    [InlineData(1, 0, "MinimumGroupCount")]
    [InlineData(5, 4, "MaximumGroupCount")]
    [InlineData(2, 50, "MaximumGroupCount")]
    public void Search_BadRange_ThrowsNamingTheBound(int minimum, int maximum, string parameter)
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 1, n: 50, d: 8, trueGroups: 2, noise: 0.3, out _);

        var error = Assert.Throws<ArgumentException>(() =>
            GroupCountSearch.Search(rows, new GroupCountSearchOptions { MinimumGroupCount = minimum, MaximumGroupCount = maximum }));
        Assert.Equal(parameter, error.ParamName);
    }

    [Fact]
    public void Search_TwoRows_ThrowsAskingForAFixedCount()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 1, n: 2, d: 8, trueGroups: 2, noise: 0.3, out _);

        var error = Assert.Throws<ArgumentException>(() => GroupCountSearch.Search(rows, new GroupCountSearchOptions()));
        Assert.Contains("at least 3", error.Message);
    }

    [Fact]
    public void NoStructureThreshold_ScalesWithDimensions()
    {
        Assert.Equal(0.05, GroupCountSearchOptions.NoStructureThreshold(384));
        Assert.Equal(3.0 / 16, GroupCountSearchOptions.NoStructureThreshold(16));
        Assert.Equal(0.5, GroupCountSearchOptions.NoStructureThreshold(2));
    }

    /// <summary>16 uneven groups in 128 dimensions, about 4,000 rows (see <see cref="TestData.UnevenUnitClusters"/>).</summary>
    internal static EmbeddingMatrix UnevenGroups(int seed, out int[] labels) =>
        TestData.UnevenUnitClusters(seed, n: 4000, d: 128, trueGroups: 16, centreCorrelation: 0.3, noise: 0.153, minimumSize: 40, out labels);

    internal static EmbeddingMatrix Uniform(int seed, int n, int d)
    {
        var random = new SplitMix64((ulong)seed);
        var rows = EmbeddingMatrix.Allocate(n, d);
        for (int i = 0; i < rows.Values.Length; i++)
        {
            rows.Values[i] = (float)TestData.Gaussian(ref random);   // normalised Gaussians are uniform on the sphere
        }

        RowNormalisation.NormaliseInPlace(rows);
        return rows;
    }

    /// <summary>
    /// Four groups in two pairs: directions e0 and 0.5 e0 + 0.87 e1, e2 and 0.5 e2 + 0.87 e3 (cosine 0.5 within a
    /// pair, 0 across), rows at cosine about 0.96 to their direction. Expected mean silhouettes (worked by hand,
    /// not from a source): about 0.85 at 4 groups, 0.77 at 3, 0.69 at 2.
    /// </summary>
    private static EmbeddingMatrix PairsOfGroups(int seed, int n, int d)
    {
        var random = new SplitMix64((ulong)seed);
        double sine = Math.Sqrt(0.75);
        var rows = EmbeddingMatrix.Allocate(n, d);
        for (int i = 0; i < n; i++)
        {
            int group = i % 4;
            int axis = group / 2 * 2;
            Span<float> row = rows.Row(i);
            for (int p = 0; p < d; p++)
            {
                row[p] = (float)(0.05 * TestData.Gaussian(ref random));
            }

            row[axis] += group % 2 == 0 ? 1f : 0.5f;
            row[axis + 1] += group % 2 == 0 ? 0f : (float)sine;
        }

        RowNormalisation.NormaliseInPlace(rows);
        return rows;
    }

    private static GroupCountCandidate Candidate(int k, double silhouette) => new(k, silhouette, 0.5, TimeSpan.Zero);

    private static string Curve(GroupCountSearchResult result) =>
        string.Join(", ", result.Curve.Select(c => FormattableString.Invariant($"{c.GroupCount}:{c.Silhouette:F3}")));
}
