namespace TopicGroups.Server.Tests;

/// <summary>The in-memory server with its saved groupings in a SQLite file of the caller's choosing.</summary>
public class StoreTestHost : TestHost
{
    public StoreTestHost(string sqlitePath)
        : this(sqlitePath, null)
    {
    }

    /// <summary>The same, with more configuration settings.</summary>
    protected StoreTestHost(string sqlitePath, IReadOnlyDictionary<string, string?>? settings)
        : base(new Dictionary<string, string?>(settings ?? new Dictionary<string, string?>()) { ["TopicGroups:Storage:SqlitePath"] = sqlitePath })
    {
    }
}
