namespace TopicGroups.Cli.Output;

/// <summary>
/// Which documents the HTML map draws when a batch has more than the cap: a fixed sample (the same input always
/// gives the same points) in which every group keeps its share, and small groups keep up to
/// <see cref="WholeGroupSize"/> members so they stay visible.
/// </summary>
internal static class MapPointSample
{
    /// <summary>Points drawn at most: about 0.5 MB of HTML with their texts, and smooth hovering in a browser.</summary>
    public const int DefaultLimit = 3_000;

    /// <summary>Groups are given at least this many points (or all their members when they have fewer).</summary>
    public const int WholeGroupSize = 25;

    /// <summary>Indexes of the documents to draw, ascending. groupOf[i] is document i's group index (0..groupCount-1).</summary>
    public static int[] Select(IReadOnlyList<int> groupOf, int groupCount, int limit)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(limit, 1);
        int n = groupOf.Count;
        if (n <= limit)
        {
            return Enumerable.Range(0, n).ToArray();
        }

        var members = new List<int>[groupCount];
        for (int g = 0; g < groupCount; g++)
        {
            members[g] = [];
        }

        for (int i = 0; i < n; i++)
        {
            members[groupOf[i]].Add(i);
        }

        // Quotas: a floor per group, then the rest in proportion to what each group has left (largest remainder).
        int[] quota = new int[groupCount];
        int floors = 0;
        int floor = Math.Min(WholeGroupSize, Math.Max(1, limit / Math.Max(1, groupCount)));   // many groups: smaller floors
        for (int g = 0; g < groupCount; g++)
        {
            quota[g] = Math.Min(members[g].Count, floor);
            floors += quota[g];
        }

        int remaining = Math.Max(0, limit - floors);
        long left = n - floors;
        var remainders = new (double Fraction, int Group)[groupCount];
        int given = 0;
        for (int g = 0; g < groupCount; g++)
        {
            double exact = left == 0 ? 0 : (double)remaining * (members[g].Count - quota[g]) / left;
            int whole = (int)Math.Floor(exact);
            quota[g] += whole;
            given += whole;
            remainders[g] = (exact - whole, g);
        }

        foreach (var (_, g) in remainders.OrderByDescending(r => r.Fraction).ThenBy(r => r.Group).Take(remaining - given))
        {
            quota[g]++;
        }

        // Within a group, members in a fixed pseudo-random order (a hash of the document index): no order bias.
        var chosen = new List<int>(limit);
        for (int g = 0; g < groupCount; g++)
        {
            chosen.AddRange(members[g].OrderBy(i => Mix((ulong)i)).ThenBy(i => i).Take(Math.Min(quota[g], members[g].Count)));
        }

        chosen.Sort();
        return chosen.ToArray();
    }

    // SplitMix64's output function (Steele, Lea & Flood, 2014): spreads consecutive indexes over the whole range.
    private static ulong Mix(ulong value)
    {
        value = unchecked(value + 0x9E3779B97F4A7C15UL);
        value = unchecked((value ^ (value >> 30)) * 0xBF58476D1CE4E5B9UL);
        value = unchecked((value ^ (value >> 27)) * 0x94D049BB133111EBUL);
        return value ^ (value >> 31);
    }
}
