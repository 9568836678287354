using System.Data;
using System.Data.Common;
using Npgsql;

namespace TopicGroups.Server.Storage;

/// <summary>
/// Saved groupings in PostgreSQL, so that several server replicas share one store. Saves are single
/// transactions; replicas that start together migrate the schema one at a time under an advisory lock.
/// </summary>
public sealed class PostgresGroupingStore : SqlGroupingStore, IAsyncDisposable
{
    // Any fixed 64-bit number unique to this service: the key of pg_advisory_xact_lock for schema migration.
    private const long MigrationLockKey = 0x546F70696347_01;

    private static readonly string[] Steps =
    [
        """
        CREATE TABLE topicgroups_groupings (
          name TEXT NOT NULL PRIMARY KEY,
          created_at_us BIGINT NOT NULL,
          group_count INTEGER NOT NULL,
          document_count INTEGER NOT NULL,
          dimensions INTEGER NOT NULL,
          objective DOUBLE PRECISION NOT NULL,
          highest_group_id INTEGER NOT NULL,
          outlier_score_threshold DOUBLE PRECISION NOT NULL,
          outlier_minimum_group_size INTEGER NOT NULL,
          options_json TEXT NOT NULL,
          centroids BYTEA NOT NULL);
        CREATE INDEX topicgroups_groupings_by_time ON topicgroups_groupings (created_at_us DESC, name);
        CREATE TABLE topicgroups_groups (
          grouping_name TEXT NOT NULL,
          position INTEGER NOT NULL,
          group_id INTEGER NOT NULL,
          size INTEGER NOT NULL,
          cohesion DOUBLE PRECISION NOT NULL,
          outlier_count INTEGER NOT NULL,
          similarity_median DOUBLE PRECISION NOT NULL,
          similarity_mad DOUBLE PRECISION NOT NULL,
          terms_json TEXT NOT NULL,
          examples_json TEXT NOT NULL,
          PRIMARY KEY (grouping_name, position));
        """,

        // Version 2: a tenant leads both keys; rows saved before tenants existed belong to the default tenant.
        $"""
        ALTER TABLE topicgroups_groupings ADD COLUMN tenant TEXT NOT NULL DEFAULT '{Security.CallerTenant.Default}';
        ALTER TABLE topicgroups_groupings ALTER COLUMN tenant DROP DEFAULT;
        ALTER TABLE topicgroups_groupings DROP CONSTRAINT topicgroups_groupings_pkey, ADD PRIMARY KEY (tenant, name);
        DROP INDEX topicgroups_groupings_by_time;
        CREATE INDEX topicgroups_groupings_by_time ON topicgroups_groupings (tenant, created_at_us DESC, name);
        ALTER TABLE topicgroups_groups ADD COLUMN tenant TEXT NOT NULL DEFAULT '{Security.CallerTenant.Default}';
        ALTER TABLE topicgroups_groups ALTER COLUMN tenant DROP DEFAULT;
        ALTER TABLE topicgroups_groups DROP CONSTRAINT topicgroups_groups_pkey, ADD PRIMARY KEY (tenant, grouping_name, position);
        """,

        // Version 3: the request id a grouping was saved by, so a retried call does not save twice (docs/retries.md).
        """
        ALTER TABLE topicgroups_groupings ADD COLUMN request_id TEXT;
        ALTER TABLE topicgroups_groupings ADD COLUMN request_hash TEXT;
        CREATE UNIQUE INDEX topicgroups_groupings_by_request ON topicgroups_groupings (tenant, request_id);
        """,
    ];

    private readonly NpgsqlDataSource _dataSource;

    public PostgresGroupingStore(string connectionString)
    {
        ArgumentException.ThrowIfNullOrWhiteSpace(connectionString);
        _dataSource = NpgsqlDataSource.Create(connectionString);
    }

    protected override IReadOnlyList<string> SchemaSteps => Steps;

    protected override async Task<DbConnection> OpenConnectionAsync(CancellationToken cancellationToken) =>
        await _dataSource.OpenConnectionAsync(cancellationToken);

    protected override async Task<DbTransaction> BeginWriteAsync(DbConnection connection, bool forMigration, CancellationToken cancellationToken)
    {
        DbTransaction transaction = await connection.BeginTransactionAsync(IsolationLevel.ReadCommitted, cancellationToken);
        if (forMigration)
        {
            await using DbCommand command = connection.CreateCommand();
            command.Transaction = transaction;
            command.CommandText = $"SELECT pg_advisory_xact_lock({MigrationLockKey})";
            await command.ExecuteNonQueryAsync(cancellationToken);
        }

        return transaction;
    }

    protected override async Task<DbTransaction> BeginReadAsync(DbConnection connection, CancellationToken cancellationToken) =>
        await connection.BeginTransactionAsync(IsolationLevel.RepeatableRead, cancellationToken);

    public ValueTask DisposeAsync() => _dataSource.DisposeAsync();
}
