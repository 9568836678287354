using System.Text.Json;
using TopicGroups.Core.Clustering;
using TopicGroups.Core.Tests.TestSupport;

namespace TopicGroups.Core.Tests.Clustering;

public sealed class PartitionAgreementTests
{
    // Manning, Raghavan & Schütze, Introduction to Information Retrieval (2008), §16.3 (Figure 16.4):
    // three clusters {5 x, 1 o}, {1 x, 4 o, 1 ◇}, {2 x, 3 ◇}; classes x = 0, o = 1, ◇ = 2.
    private static readonly int[] BookClusters = [0, 0, 0, 0, 0, 0, 1, 1, 1, 1, 1, 1, 2, 2, 2, 2, 2];
    private static readonly int[] BookClasses = [0, 0, 0, 0, 0, 1, 0, 1, 1, 1, 1, 2, 0, 0, 2, 2, 2];

    [Fact]
    public void Purity_BookExample_MatchesPublishedValue()
    {
        // Source: the book, §16.3: purity ≈ 0.71 (= 12/17); Debian sklearn-based script gives 0.70588.
        Assert.Equal(12.0 / 17.0, PartitionAgreement.Purity(BookClasses, BookClusters), 12);
        Assert.Equal(0.71, PartitionAgreement.Purity(BookClasses, BookClusters), 2);
    }

    [Fact]
    public void NormalisedMutualInformation_BookExample_MatchesPublishedValueAndSklearn()
    {
        double nmi = PartitionAgreement.NormalisedMutualInformation(BookClasses, BookClusters);
        // Source: the book, §16.3: NMI ≈ 0.36 (quoted from memory, confirmed by the next line).
        Assert.Equal(0.36, nmi, 2);
        // Source: sklearn 1.2.1 normalized_mutual_info_score(classes, clusters, average_method="arithmetic"),
        // computed by Data/make_reference.py (partitions.iir_16_3.nmi_arithmetic).
        Assert.Equal(Reference("iir_16_3", "nmi_arithmetic"), nmi, 12);
    }

    [Fact]
    public void RandIndex_BookExample_MatchesPublishedValueAndSklearn()
    {
        double rand = PartitionAgreement.RandIndex(BookClasses, BookClusters);
        // Source: the book, §16.3: RI = (20 + 72) / 136 ≈ 0.68 (quoted from memory, confirmed by the next line).
        Assert.Equal(0.68, rand, 2);
        // Source: sklearn 1.2.1 rand_score, via Data/make_reference.py (partitions.iir_16_3.rand_index).
        Assert.Equal(Reference("iir_16_3", "rand_index"), rand, 12);
    }

    [Fact]
    public void AdjustedRandIndex_BookExample_MatchesSklearn()
    {
        // Source: sklearn 1.2.1 adjusted_rand_score(classes, clusters) = 0.242914979757085, via
        // `/usr/bin/python3 make_reference.py` in Data/ (partitions.iir_16_3.adjusted_rand_index).
        Assert.Equal(Reference("iir_16_3", "adjusted_rand_index"), PartitionAgreement.AdjustedRandIndex(BookClasses, BookClusters), 12);
    }

    [Theory]
    [InlineData("permuted")]
    [InlineData("split")]
    public void Agreement_SmallPairs_MatchSklearn(string name)
    {
        // Source: sklearn 1.2.1 normalized_mutual_info_score and adjusted_rand_score, via Data/make_reference.py.
        JsonElement pair = ReferenceData.ReferenceValues.GetProperty("partitions").GetProperty(name);
        int[] truth = ReferenceData.Ints(pair.GetProperty("truth"));
        int[] found = ReferenceData.Ints(pair.GetProperty("found"));
        Assert.Equal(pair.GetProperty("nmi_arithmetic").GetDouble(), PartitionAgreement.NormalisedMutualInformation(truth, found), 12);
        Assert.Equal(pair.GetProperty("adjusted_rand_index").GetDouble(), PartitionAgreement.AdjustedRandIndex(truth, found), 12);
    }

    [Fact]
    public void Agreement_LabelsRenamed_Unchanged()
    {
        int[] renamed = BookClusters.Select(c => 10 - 3 * c).ToArray();
        Assert.Equal(PartitionAgreement.NormalisedMutualInformation(BookClasses, BookClusters), PartitionAgreement.NormalisedMutualInformation(BookClasses, renamed), 12);
        Assert.Equal(PartitionAgreement.AdjustedRandIndex(BookClasses, BookClusters), PartitionAgreement.AdjustedRandIndex(BookClasses, renamed), 12);
    }

    [Fact]
    public void Agreement_IdenticalPartitions_One()
    {
        Assert.Equal(1.0, PartitionAgreement.NormalisedMutualInformation(BookClasses, BookClasses), 12);
        Assert.Equal(1.0, PartitionAgreement.AdjustedRandIndex(BookClasses, BookClasses), 12);
        Assert.Equal(1.0, PartitionAgreement.RandIndex(BookClasses, BookClasses), 12);
    }

    [Fact]
    public void Agreement_DifferentLengths_ThrowsNamingGroups()
    {
        ArgumentException error = Assert.Throws<ArgumentException>(() => PartitionAgreement.AdjustedRandIndex([0, 1, 1], [0, 1]));
        Assert.Equal("groups", error.ParamName);
    }

    private static double Reference(string example, string measure) =>
        ReferenceData.ReferenceValues.GetProperty("partitions").GetProperty(example).GetProperty(measure).GetDouble();
}
