using System.Text.Json;
using TopicGroups.Core.Clustering;
using TopicGroups.Core.Tests.TestSupport;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Tests.Clustering;

/// <summary>
/// Reference: scikit-learn 1.2.1 (Debian 12's python3-sklearn), silhouette_score and silhouette_samples with
/// metric="cosine", on the first 300 UCI digits rows; values and the exact command in
/// Data/make_silhouette_reference.py. Tolerance 1e-5: our rows are float32 (the reference's float64), and the
/// sums run in float64, so single values agree to about 1e-6.
/// </summary>
public sealed class SilhouetteTests
{
    private const double Tolerance = 1e-5;
    private const int Rows = 300;

    public static TheoryData<string, int> Labellings => new()
    {
        { "digit", 10 },        // sklearn silhouette_score = 0.3712 (see silhouette_reference.json)
        { "digit_mod3", 3 },    // sklearn silhouette_score = 0.1679
        { "singleton", 11 },    // sklearn silhouette_score = 0.3002; row 0 alone, so its s is 0
    };

    [Theory, MemberData(nameof(Labellings))]
    public void Compute_EveryRowOfDigits_MatchesSklearnScoreAndSamples(string labelling, int k)
    {
        (EmbeddingMatrix rows, int[] labels, double score, double[] samples) = Reference(labelling);

        SilhouetteSample result = Silhouette.Compute(rows, labels, k, Enumerable.Range(0, Rows).ToArray(), workerCount: 2);

        Assert.Equal(score, result.Mean, Tolerance);                       // sklearn silhouette_score
        for (int i = 0; i < Rows; i++)
        {
            Assert.True(Math.Abs(samples[i] - result.Values[i]) < Tolerance, $"row {i}: sklearn {samples[i]}, ours {result.Values[i]}");
        }
    }

    [Fact]
    public void Compute_SingletonGroup_ItsRowScoresZero()
    {
        (EmbeddingMatrix rows, int[] labels, _, double[] samples) = Reference("singleton");

        SilhouetteSample result = Silhouette.Compute(rows, labels, 11, [0, 1, 2], workerCount: 1);

        Assert.Equal(0.0, samples[0]);          // sklearn's convention, Rousseeuw (1987): s = 0 for a one-member group
        Assert.Equal(0.0, result.Values[0]);
    }

    [Fact]
    public void Compute_SampleOfRows_MeanOfThoseRowsExactSilhouettes()
    {
        (EmbeddingMatrix rows, int[] labels, _, double[] samples) = Reference("digit");
        var random = SplitMix64.ForStream(11, 0);
        int[] sample = Silhouette.SampleRows(Rows, 60, ref random);

        SilhouetteSample result = Silhouette.Compute(rows, labels, 10, sample, workerCount: 2);

        // A sampled row's silhouette uses distances to every row, so it equals sklearn's value for that row.
        Assert.Equal(sample.Average(i => samples[i]), result.Mean, Tolerance);
        Assert.Equal(60, result.Count);
    }

    [Fact]
    public void Compute_OneOrEightThreads_IdenticalValues()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 3, n: 2000, d: 48, trueGroups: 6, noise: 0.2, out int[] labels);
        var random = SplitMix64.ForStream(3, 0);
        int[] sample = Silhouette.SampleRows(2000, 700, ref random);

        SilhouetteSample one = Silhouette.Compute(rows, labels, 6, sample, workerCount: 1);
        SilhouetteSample eight = Silhouette.Compute(rows, labels, 6, sample, workerCount: 8);

        Assert.Equal(one.Values, eight.Values);
        Assert.Equal(one.Mean, eight.Mean);
    }

    [Fact]
    public void GroupMeans_CountsCoverTheSample_MeansAverageTheirRows()
    {
        (EmbeddingMatrix rows, int[] labels, _, double[] samples) = Reference("digit_mod3");

        SilhouetteSample result = Silhouette.Compute(rows, labels, 3, Enumerable.Range(0, Rows).ToArray(), workerCount: 2);
        (double[] means, int[] counts) = result.GroupMeans();

        Assert.Equal(Rows, counts.Sum());
        for (int g = 0; g < 3; g++)
        {
            double expected = Enumerable.Range(0, Rows).Where(i => labels[i] == g).Average(i => samples[i]);
            Assert.Equal(expected, means[g], Tolerance);
        }
    }

    [Fact]
    public void PairMean_TwoOfThreeGroups_EqualsSilhouetteOfThoseTwoAlone()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 9, n: 300, d: 16, trueGroups: 3, noise: 0.6, out int[] labels);
        SilhouetteSample three = Silhouette.Compute(rows, labels, 3, Enumerable.Range(0, 300).ToArray(), workerCount: 2);

        // The same two groups scored on their own rows only, as a two-group batch.
        int[] kept = Enumerable.Range(0, 300).Where(i => labels[i] != 2).ToArray();
        var pairRows = EmbeddingMatrix.Allocate(kept.Length, 16);
        for (int r = 0; r < kept.Length; r++)
        {
            rows.Row(kept[r]).CopyTo(pairRows.Row(r));
        }

        SilhouetteSample two = Silhouette.Compute(pairRows, kept.Select(i => labels[i]).ToArray(), 2, Enumerable.Range(0, kept.Length).ToArray(), workerCount: 2);

        Assert.Equal(two.Mean, three.PairMean(0, 1), 1e-9);
    }

    [Fact]
    public void SampleRows_SameSeed_SameDistinctSortedRows()
    {
        var first = SplitMix64.ForStream(5, 2);
        var second = SplitMix64.ForStream(5, 2);

        int[] a = Silhouette.SampleRows(10_000, 500, ref first);
        int[] b = Silhouette.SampleRows(10_000, 500, ref second);

        Assert.Equal(a, b);
        Assert.Equal(500, a.Distinct().Count());
        Assert.Equal(a.Order(), a);
        Assert.All(a, i => Assert.InRange(i, 0, 9_999));
    }

    [Fact]
    public void SampleRows_FewerRowsThanSampleSize_EveryRow()
    {
        var random = SplitMix64.ForStream(5, 2);

        Assert.Equal(Enumerable.Range(0, 40), Silhouette.SampleRows(40, 5_000, ref random));
    }

    [Fact]
    public void Compute_OneGroup_MeanIsUndefined()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 1, n: 20, d: 8, trueGroups: 2, noise: 0.3, out _);

        SilhouetteSample result = Silhouette.Compute(rows, new int[20], 1, Enumerable.Range(0, 20).ToArray(), workerCount: 1);

        Assert.True(double.IsNaN(result.Mean)); // Rousseeuw (1987): s needs a neighbouring group
    }

    [Fact]
    public void Compute_GroupOutOfRange_ThrowsNamingAssignments()
    {
        EmbeddingMatrix rows = TestData.UnitClusters(seed: 1, n: 10, d: 8, trueGroups: 2, noise: 0.3, out int[] labels);
        labels[4] = 7;

        var error = Assert.Throws<ArgumentException>(() => Silhouette.Compute(rows, labels, 2, [0, 1], workerCount: 1));
        Assert.Equal("assignments", error.ParamName);
    }

    private static (EmbeddingMatrix Rows, int[] Labels, double Score, double[] Samples) Reference(string labelling)
    {
        JsonElement reference = ReferenceData.Json("silhouette_reference.json").GetProperty("labellings").GetProperty(labelling);
        (float[] pixels, _) = ReferenceData.HandwrittenDigits();
        var rows = new EmbeddingMatrix(pixels.AsSpan(0, Rows * 64).ToArray(), Rows, 64);
        RowNormalisation.NormaliseInPlace(rows);
        return (
            rows,
            ReferenceData.Ints(reference.GetProperty("labels")),
            reference.GetProperty("silhouette_score").GetDouble(),
            ReferenceData.Doubles(reference.GetProperty("silhouette_samples")));
    }
}
