namespace TopicGroups.Core.Grouping;

/// <summary>
/// Flags members whose similarity to their centre is far below their group's usual, by the one-sided
/// modified z-score of Iglewicz &amp; Hoaglin (1993): M = 0.6745 (s − median) / MAD; outlier when
/// M &lt; −threshold. Median and MAD resist the very outliers being looked for, unlike mean and SD.
/// </summary>
internal static class OutlierRule
{
    // 0.6745 is the 0.75 quantile of the standard normal: it scales MAD to a standard deviation.
    private const double NormalQuartile = 0.6745;

    /// <summary>Marks outliers among one group's members; similarities holds the members' cosines.</summary>
    public static void Flag(ReadOnlySpan<float> similarities, double threshold, int minimumGroupSize, Span<bool> isOutlier)
    {
        isOutlier.Clear();
        if (similarities.Length < minimumGroupSize || similarities.Length < 3)
        {
            return;
        }

        double median = Median(similarities, out double mad);
        if (mad <= 0)
        {
            return; // at least half the members are equally close: no spread to measure against
        }

        for (int i = 0; i < similarities.Length; i++)
        {
            isOutlier[i] = IsFarBelow(similarities[i], median, mad, threshold);
        }
    }

    /// <summary>
    /// The same rule for a document routed into a saved group, against the median and MAD of the group's
    /// members when it was saved (<see cref="GroupingSnapshot"/>).
    /// </summary>
    public static bool IsOutlier(float similarity, int groupSize, double median, double mad, double threshold, int minimumGroupSize) =>
        groupSize >= minimumGroupSize && groupSize >= 3 && mad > 0 && IsFarBelow(similarity, median, mad, threshold);

    private static bool IsFarBelow(float similarity, double median, double mad, double threshold) =>
        NormalQuartile * (similarity - median) / mad < -threshold;

    /// <summary>Median of the values, and the median absolute deviation from it.</summary>
    internal static double Median(ReadOnlySpan<float> values, out double medianAbsoluteDeviation)
    {
        float[] sorted = values.ToArray();
        Array.Sort(sorted);
        double median = MedianOfSorted(sorted);
        for (int i = 0; i < sorted.Length; i++)
        {
            sorted[i] = (float)Math.Abs(sorted[i] - median);
        }

        Array.Sort(sorted);
        medianAbsoluteDeviation = MedianOfSorted(sorted);
        return median;
    }

    private static double MedianOfSorted(float[] sorted)
    {
        int middle = sorted.Length / 2;
        return sorted.Length % 2 == 1 ? sorted[middle] : 0.5 * (sorted[middle - 1] + (double)sorted[middle]);
    }
}
