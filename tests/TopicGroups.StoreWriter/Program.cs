using TopicGroups.Core.Grouping;
using TopicGroups.Core.Terms;
using TopicGroups.Server.Storage;

// Saves version 1, 2, 3, ... of one grouping under one name (replacing), and prints "saved N" after each commit,
// until it is killed. Version v is recognisable in every part: all centre values are v, group g has id
// v * 1000 + g and size v, so a reader can tell a whole version from a torn one.
//   TopicGroups.StoreWriter sqlite PATH NAME
//   TopicGroups.StoreWriter postgres CONNECTION-STRING NAME
internal static class StoreWriterProgram
{
    public static async Task<int> Main(string[] args)
    {
        if (args.Length != 3 || args[0] is not ("sqlite" or "postgres"))
        {
            Console.Error.WriteLine("usage: TopicGroups.StoreWriter sqlite|postgres PATH-OR-CONNECTION-STRING NAME");
            return 2;
        }

        IGroupingStore store = args[0] == "sqlite" ? new SqliteGroupingStore(args[1]) : new PostgresGroupingStore(args[1]);
        string name = args[2];
        for (int version = 1; ; version++)
        {
            await store.SaveAsync(StoreWriterVersions.Tenant, StoreWriterVersions.Make(name, version), replace: true, CancellationToken.None);
            Console.Out.WriteLine($"saved {version}");
            Console.Out.Flush();
        }
    }
}

/// <summary>The versions the writer saves, and the check a reader applies.</summary>
public static class StoreWriterVersions
{
    /// <summary>The tenant the writer saves for (not the default one, so tenant scoping is crash-tested too).</summary>
    public const string Tenant = "support-desk";

    public const int GroupCount = 300;
    public const int Dimensions = 384;

    public static SavedGrouping Make(string name, int version)
    {
        float[] centroids = new float[GroupCount * Dimensions];
        Array.Fill(centroids, version);
        var groups = new SnapshotGroup[GroupCount];
        for (int g = 0; g < GroupCount; g++)
        {
            groups[g] = new SnapshotGroup(
                version * 1000 + g, version, 0.5, 0, [new WeightedTerm($"term{version}", 1)], [new GroupExample(g, $"doc-{g}", $"text of version {version}", 0.9f)], 0.5, 0.01);
        }

        var snapshot = new GroupingSnapshot
        {
            Centroids = centroids,
            Dimensions = Dimensions,
            Groups = groups,
            DocumentCount = version,
            Objective = 0.5,
            OutlierScoreThreshold = 3.5,
            OutlierMinimumGroupSize = 8,
            HighestGroupId = version * 1000 + GroupCount - 1,
        };
        return new SavedGrouping(name, DateTimeOffset.UtcNow, snapshot, new GroupingOptions { GroupCount = GroupCount });
    }

    /// <summary>The version a stored grouping holds; throws when its parts come from different versions.</summary>
    public static int VersionOf(SavedGrouping grouping)
    {
        int version = grouping.Snapshot.DocumentCount;
        if (grouping.Snapshot.Groups.Count != GroupCount
            || grouping.Snapshot.Centroids.Any(value => value != version)
            || grouping.Snapshot.Groups.Select((group, g) => group.Id != version * 1000 + g || group.Size != version || group.Terms[0].Term != $"term{version}").Any(torn => torn))
        {
            throw new InvalidDataException($"The stored grouping mixes versions (header says {version}).");
        }

        return version;
    }
}
