namespace TopicGroups.Core.Clustering;

/// <summary>
/// How far two partitions of the same items agree, whatever the labels are called: purity, normalised
/// mutual information, Rand index and adjusted Rand index. Used to compare a grouping with known
/// classes (tests, quality reports) or two groupings with each other.
/// </summary>
internal static class PartitionAgreement
{
    /// <summary>
    /// Share of items that fall in their group's majority class (Manning, Raghavan &amp; Schütze,
    /// Introduction to Information Retrieval, 2008, §16.3, eq. 16.1).
    /// </summary>
    public static double Purity(ReadOnlySpan<int> classes, ReadOnlySpan<int> groups)
    {
        long[,] table = Contingency(classes, groups, out _, out _);
        long majoritySum = 0;
        for (int g = 0; g < table.GetLength(1); g++)
        {
            long majority = 0;
            for (int c = 0; c < table.GetLength(0); c++)
            {
                majority = Math.Max(majority, table[c, g]);
            }

            majoritySum += majority;
        }

        return classes.Length == 0 ? 1.0 : (double)majoritySum / classes.Length;
    }

    /// <summary>
    /// NMI = I(classes; groups) / ((H(classes) + H(groups)) / 2) (Manning, Raghavan &amp; Schütze, 2008,
    /// §16.3, eq. 16.2; the arithmetic-mean normaliser). 1 when both put everything in one part; 0 when
    /// they share no information.
    /// </summary>
    public static double NormalisedMutualInformation(ReadOnlySpan<int> classes, ReadOnlySpan<int> groups)
    {
        long[,] table = Contingency(classes, groups, out long[] classTotals, out long[] groupTotals);
        if ((classTotals.Length == 1 && groupTotals.Length == 1) || classes.Length == 0)
        {
            return 1.0;
        }

        double n = classes.Length;
        double mutualInformation = 0;
        for (int c = 0; c < classTotals.Length; c++)
        {
            for (int g = 0; g < groupTotals.Length; g++)
            {
                long count = table[c, g];
                if (count > 0)
                {
                    mutualInformation += count / n * Math.Log(n * count / ((double)classTotals[c] * groupTotals[g]));
                }
            }
        }

        if (mutualInformation <= 0)
        {
            return 0.0;
        }

        double normaliser = (Entropy(classTotals, n) + Entropy(groupTotals, n)) / 2;
        return Math.Min(1.0, mutualInformation / normaliser);
    }

    /// <summary>Share of item pairs on which the partitions agree: together in both or apart in both (Rand, 1971).</summary>
    public static double RandIndex(ReadOnlySpan<int> classes, ReadOnlySpan<int> groups)
    {
        PairCounts pairs = CountPairs(classes, groups);
        if (pairs.Total == 0)
        {
            return 1.0;
        }

        // Agreeing pairs = together in both + apart in both = total − together in one only.
        double agreeing = pairs.Total - (pairs.SameClass - pairs.SameBoth) - (pairs.SameGroup - pairs.SameBoth);
        return agreeing / pairs.Total;
    }

    /// <summary>
    /// Rand index corrected for chance (Hubert &amp; Arabie, 1985): 1 for identical partitions, about 0
    /// for independent ones, negative when worse than chance.
    /// </summary>
    public static double AdjustedRandIndex(ReadOnlySpan<int> classes, ReadOnlySpan<int> groups)
    {
        PairCounts pairs = CountPairs(classes, groups);
        if (pairs.Total == 0)
        {
            return 1.0;
        }

        double expected = pairs.SameClass * pairs.SameGroup / pairs.Total;
        double maximum = (pairs.SameClass + pairs.SameGroup) / 2;
        if (maximum == expected)
        {
            // Both partitions are trivial in the same way (one part each, or all singletons each).
            return 1.0;
        }

        return (pairs.SameBoth - expected) / (maximum - expected);
    }

    private readonly record struct PairCounts(double Total, double SameClass, double SameGroup, double SameBoth);

    private static PairCounts CountPairs(ReadOnlySpan<int> classes, ReadOnlySpan<int> groups)
    {
        long[,] table = Contingency(classes, groups, out long[] classTotals, out long[] groupTotals);
        double sameBoth = 0;
        foreach (long count in table)
        {
            sameBoth += Pairs(count);
        }

        double sameClass = classTotals.Sum(Pairs);
        double sameGroup = groupTotals.Sum(Pairs);
        return new PairCounts(Pairs(classes.Length), sameClass, sameGroup, sameBoth);
    }

    private static double Pairs(long count) => count * (count - 1) / 2.0;

    private static double Entropy(long[] totals, double n)
    {
        double entropy = 0;
        foreach (long total in totals)
        {
            if (total > 0)
            {
                entropy -= total / n * Math.Log(total / n);
            }
        }

        return entropy;
    }

    /// <summary>table[c, g] = items with the c-th distinct class and the g-th distinct group (in order of first appearance).</summary>
    private static long[,] Contingency(ReadOnlySpan<int> classes, ReadOnlySpan<int> groups, out long[] classTotals, out long[] groupTotals)
    {
        if (classes.Length != groups.Length)
        {
            throw new ArgumentException(
                $"classes has {classes.Length} labels but groups has {groups.Length}; both must label the same items.", nameof(groups));
        }

        int[] classIndex = Dense(classes, out int classCount);
        int[] groupIndex = Dense(groups, out int groupCount);
        var table = new long[classCount, groupCount];
        classTotals = new long[classCount];
        groupTotals = new long[groupCount];
        for (int i = 0; i < classIndex.Length; i++)
        {
            table[classIndex[i], groupIndex[i]]++;
            classTotals[classIndex[i]]++;
            groupTotals[groupIndex[i]]++;
        }

        return table;
    }

    private static int[] Dense(ReadOnlySpan<int> labels, out int distinct)
    {
        var index = new Dictionary<int, int>();
        int[] dense = new int[labels.Length];
        for (int i = 0; i < labels.Length; i++)
        {
            if (!index.TryGetValue(labels[i], out int value))
            {
                value = index.Count;
                index.Add(labels[i], value);
            }

            dense[i] = value;
        }

        distinct = index.Count;
        return dense;
    }
}
