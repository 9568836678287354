namespace TopicGroups.Server.Storage;

/// <summary>Where saved groupings live, from configuration section "TopicGroups:Storage".</summary>
public sealed class GroupingStoreOptions
{
    public const string SectionName = "TopicGroups:Storage";

    /// <summary>
    /// SQLite database file, created with its folder when missing. Used unless PostgresConnectionString is set.
    /// </summary>
    /// <value>The default is <see cref="DefaultSqlitePath"/>: groupings.db in the user's data folder.</value>
    public string? SqlitePath { get; set; }

    /// <summary>A PostgreSQL connection string (Npgsql form); when set, groupings are stored there instead.</summary>
    /// <value>The default is null: SQLite.</value>
    public string? PostgresConnectionString { get; set; }

    /// <summary>
    /// $XDG_DATA_HOME/topicgroups/groupings.db, or ~/.local/share/topicgroups/groupings.db when XDG_DATA_HOME is
    /// unset (on Windows: %LOCALAPPDATA%\topicgroups\groupings.db).
    /// </summary>
    public static string DefaultSqlitePath =>
        Path.Combine(Environment.GetFolderPath(Environment.SpecialFolder.LocalApplicationData, Environment.SpecialFolderOption.DoNotVerify), "topicgroups", "groupings.db");

    public string ResolvedSqlitePath => string.IsNullOrWhiteSpace(SqlitePath) ? DefaultSqlitePath : SqlitePath;
}
