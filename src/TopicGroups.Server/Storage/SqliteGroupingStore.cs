using System.Data.Common;
using Microsoft.Data.Sqlite;

namespace TopicGroups.Server.Storage;

/// <summary>
/// Saved groupings in one SQLite file (the default store). Write-ahead logging lets readers work while a save
/// runs; every save is one IMMEDIATE transaction, so saves queue for the write lock instead of failing, and a
/// crash mid-save leaves the last committed state (SQLite's atomic commit). synchronous=FULL makes each
/// committed save survive a power loss too.
/// </summary>
public sealed class SqliteGroupingStore : SqlGroupingStore
{
    private static readonly string[] Steps =
    [
        """
        CREATE TABLE topicgroups_groupings (
          name TEXT NOT NULL PRIMARY KEY,
          created_at_us INTEGER NOT NULL,
          group_count INTEGER NOT NULL,
          document_count INTEGER NOT NULL,
          dimensions INTEGER NOT NULL,
          objective REAL NOT NULL,
          highest_group_id INTEGER NOT NULL,
          outlier_score_threshold REAL NOT NULL,
          outlier_minimum_group_size INTEGER NOT NULL,
          options_json TEXT NOT NULL,
          centroids BLOB NOT NULL);
        CREATE INDEX topicgroups_groupings_by_time ON topicgroups_groupings (created_at_us DESC, name);
        CREATE TABLE topicgroups_groups (
          grouping_name TEXT NOT NULL,
          position INTEGER NOT NULL,
          group_id INTEGER NOT NULL,
          size INTEGER NOT NULL,
          cohesion REAL NOT NULL,
          outlier_count INTEGER NOT NULL,
          similarity_median REAL NOT NULL,
          similarity_mad REAL NOT NULL,
          terms_json TEXT NOT NULL,
          examples_json TEXT NOT NULL,
          PRIMARY KEY (grouping_name, position));
        """,

        // Version 2: a tenant leads both keys. SQLite cannot change a primary key in place, so each table is
        // rebuilt; rows saved before tenants existed belong to the default tenant.
        $"""
        CREATE TABLE topicgroups_groupings_v2 (
          tenant TEXT NOT NULL,
          name TEXT NOT NULL,
          created_at_us INTEGER NOT NULL,
          group_count INTEGER NOT NULL,
          document_count INTEGER NOT NULL,
          dimensions INTEGER NOT NULL,
          objective REAL NOT NULL,
          highest_group_id INTEGER NOT NULL,
          outlier_score_threshold REAL NOT NULL,
          outlier_minimum_group_size INTEGER NOT NULL,
          options_json TEXT NOT NULL,
          centroids BLOB NOT NULL,
          PRIMARY KEY (tenant, name));
        INSERT INTO topicgroups_groupings_v2 (tenant, name, created_at_us, group_count, document_count, dimensions, objective,
          highest_group_id, outlier_score_threshold, outlier_minimum_group_size, options_json, centroids)
        SELECT '{Security.CallerTenant.Default}', name, created_at_us, group_count, document_count, dimensions, objective,
          highest_group_id, outlier_score_threshold, outlier_minimum_group_size, options_json, centroids FROM topicgroups_groupings;
        DROP TABLE topicgroups_groupings;
        ALTER TABLE topicgroups_groupings_v2 RENAME TO topicgroups_groupings;
        CREATE INDEX topicgroups_groupings_by_time ON topicgroups_groupings (tenant, created_at_us DESC, name);
        CREATE TABLE topicgroups_groups_v2 (
          tenant TEXT NOT NULL,
          grouping_name TEXT NOT NULL,
          position INTEGER NOT NULL,
          group_id INTEGER NOT NULL,
          size INTEGER NOT NULL,
          cohesion REAL NOT NULL,
          outlier_count INTEGER NOT NULL,
          similarity_median REAL NOT NULL,
          similarity_mad REAL NOT NULL,
          terms_json TEXT NOT NULL,
          examples_json TEXT NOT NULL,
          PRIMARY KEY (tenant, grouping_name, position));
        INSERT INTO topicgroups_groups_v2 (tenant, grouping_name, position, group_id, size, cohesion, outlier_count,
          similarity_median, similarity_mad, terms_json, examples_json)
        SELECT '{Security.CallerTenant.Default}', grouping_name, position, group_id, size, cohesion, outlier_count,
          similarity_median, similarity_mad, terms_json, examples_json FROM topicgroups_groups;
        DROP TABLE topicgroups_groups;
        ALTER TABLE topicgroups_groups_v2 RENAME TO topicgroups_groups;
        """,

        // Version 3: the request id a grouping was saved by, so a retried call does not save twice (docs/retries.md).
        """
        ALTER TABLE topicgroups_groupings ADD COLUMN request_id TEXT;
        ALTER TABLE topicgroups_groupings ADD COLUMN request_hash TEXT;
        CREATE UNIQUE INDEX topicgroups_groupings_by_request ON topicgroups_groupings (tenant, request_id);
        """,
    ];

    private readonly string _connectionString;

    public SqliteGroupingStore(string path)
    {
        ArgumentException.ThrowIfNullOrWhiteSpace(path);
        Path = System.IO.Path.GetFullPath(path);
        _connectionString = new SqliteConnectionStringBuilder
        {
            DataSource = Path,
            Mode = SqliteOpenMode.ReadWriteCreate,
            Pooling = true,
            DefaultTimeout = 30,   // seconds a statement waits for the write lock before SQLITE_BUSY is reported
        }.ToString();
    }

    /// <summary>The database file.</summary>
    public string Path { get; }

    protected override IReadOnlyList<string> SchemaSteps => Steps;

    protected override async Task<DbConnection> OpenConnectionAsync(CancellationToken cancellationToken)
    {
        string? folder = System.IO.Path.GetDirectoryName(Path);
        if (!string.IsNullOrEmpty(folder))
        {
            Directory.CreateDirectory(folder);
        }

        var connection = new SqliteConnection(_connectionString);
        try
        {
            await connection.OpenAsync(cancellationToken);
            await using SqliteCommand pragmas = connection.CreateCommand();

            // journal_mode=WAL is stored in the file; synchronous and busy_timeout hold per connection.
            pragmas.CommandText = "PRAGMA busy_timeout=30000; PRAGMA journal_mode=WAL; PRAGMA synchronous=FULL;";
            await pragmas.ExecuteNonQueryAsync(cancellationToken);
            return connection;
        }
        catch
        {
            await connection.DisposeAsync();
            throw;
        }
    }

    protected override Task<DbTransaction> BeginWriteAsync(DbConnection connection, bool forMigration, CancellationToken cancellationToken) =>
        Task.FromResult<DbTransaction>(((SqliteConnection)connection).BeginTransaction(deferred: false));   // BEGIN IMMEDIATE

    protected override Task<DbTransaction> BeginReadAsync(DbConnection connection, CancellationToken cancellationToken) =>
        Task.FromResult<DbTransaction>(((SqliteConnection)connection).BeginTransaction(deferred: true));    // a WAL snapshot
}
