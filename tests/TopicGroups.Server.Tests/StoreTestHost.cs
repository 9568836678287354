namespace TopicGroups.Server.Tests;

/// <summary>The in-memory server with its saved groupings in a SQLite file of the caller's choosing.</summary>
public sealed class StoreTestHost(string sqlitePath)
    : TestHost(new Dictionary<string, string?> { ["TopicGroups:Storage:SqlitePath"] = sqlitePath })
{
}
