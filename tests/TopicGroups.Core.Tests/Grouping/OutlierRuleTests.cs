using TopicGroups.Core.Grouping;

namespace TopicGroups.Core.Tests.Grouping;

public sealed class OutlierRuleTests
{
    [Fact]
    public void Median_SmallSample_MatchesWorkedExample()
    {
        // Worked example of the median absolute deviation for {1, 1, 2, 2, 4, 6, 9}: median 2, MAD 1
        // (the standard textbook illustration of MAD; values from memory, checked by hand:
        // deviations {1, 1, 0, 0, 2, 4, 7} sort to {0, 0, 1, 1, 2, 4, 7}, whose median is 1).
        double median = OutlierRule.Median([1f, 1f, 2f, 2f, 4f, 6f, 9f], out double mad);

        Assert.Equal(2.0, median, 6);
        Assert.Equal(1.0, mad, 6);
    }

    [Fact]
    public void Flag_OneMemberFarBelowTheRest_OnlyThatMemberFlagged()
    {
        float[] similarities = Enumerable.Range(0, 20).Select(i => 0.70f + 0.002f * (i % 10)).Append(0.20f).ToArray();
        var flags = new bool[similarities.Length];

        OutlierRule.Flag(similarities, threshold: 3.5, minimumGroupSize: 8, flags);

        Assert.True(flags[^1]);
        Assert.Equal(1, flags.Count(f => f));
    }

    [Fact]
    public void Flag_MemberFarAboveTheRest_NotFlagged()
    {
        // One-sided: being unusually close to the centre is not "fitting nowhere".
        float[] similarities = Enumerable.Range(0, 20).Select(i => 0.50f + 0.002f * (i % 10)).Append(0.99f).ToArray();
        var flags = new bool[similarities.Length];

        OutlierRule.Flag(similarities, threshold: 3.5, minimumGroupSize: 8, flags);

        Assert.DoesNotContain(true, flags);
    }

    [Fact]
    public void Flag_GroupSmallerThanMinimum_NothingFlagged()
    {
        float[] similarities = [0.9f, 0.91f, 0.92f, 0.9f, 0.1f];
        var flags = new bool[similarities.Length];

        OutlierRule.Flag(similarities, threshold: 3.5, minimumGroupSize: 8, flags);

        Assert.DoesNotContain(true, flags);
    }

    [Fact]
    public void Flag_MostMembersIdentical_NothingFlagged()
    {
        // MAD is 0 when over half the members share one similarity: there is no spread to judge by.
        float[] similarities = [.. Enumerable.Repeat(1f, 10), 0.3f];
        var flags = new bool[similarities.Length];

        OutlierRule.Flag(similarities, threshold: 3.5, minimumGroupSize: 8, flags);

        Assert.DoesNotContain(true, flags);
    }

    [Fact]
    public void Flag_HigherThreshold_FlagsNoMoreThanLower()
    {
        var random = new Random(11);
        float[] similarities = Enumerable.Range(0, 200).Select(_ => (float)(0.6 + 0.1 * (random.NextDouble() - 0.5) * random.NextDouble() * 4)).ToArray();
        var strict = new bool[similarities.Length];
        var lenient = new bool[similarities.Length];

        OutlierRule.Flag(similarities, threshold: 2.0, minimumGroupSize: 8, lenient);
        OutlierRule.Flag(similarities, threshold: 3.5, minimumGroupSize: 8, strict);

        Assert.True(strict.Count(f => f) <= lenient.Count(f => f));
        Assert.All(Enumerable.Range(0, similarities.Length), i => Assert.True(!strict[i] || lenient[i]));
    }
}
