using System.Data.Common;
using Npgsql;
using TopicGroups.Server.Storage;
using Xunit;
using Xunit.Abstractions;

namespace TopicGroups.Server.Tests.Storage;

/// <summary>
/// The store contract on a real PostgreSQL server. tests/scripts/start-postgres.sh starts one on loopback and
/// prints the connection string for TOPICGROUPS_TEST_POSTGRES (CI runs it first). Each test class instance works
/// in a schema of its own, dropped afterwards. Without the variable these tests fail in CI (CI=true) and are
/// skipped elsewhere.
/// </summary>
public sealed class PostgresGroupingStoreTests(ITestOutputHelper output) : GroupingStoreContractTests(output)
{
    public const string VariableName = "TOPICGROUPS_TEST_POSTGRES";

    private readonly string _schema = "test_" + Guid.NewGuid().ToString("N");
    private readonly List<PostgresGroupingStore> _stores = [];
    private string? _connectionString;

    /// <summary>The server's connection string, or a skip (locally) / a failure (CI) when none is configured.</summary>
    public static string ServerConnectionString()
    {
        string? value = Environment.GetEnvironmentVariable(VariableName);
        if (!string.IsNullOrWhiteSpace(value))
        {
            return value;
        }

        string message = $"{VariableName} is not set: run `eval \"$(bash tests/scripts/start-postgres.sh)\"` first to start PostgreSQL on loopback.";
        if (string.Equals(Environment.GetEnvironmentVariable("CI"), "true", StringComparison.OrdinalIgnoreCase))
        {
            throw new InvalidOperationException("CI must run the PostgreSQL store tests. " + message);
        }

        Skip.If(true, message);
        return string.Empty;
    }

    protected override IGroupingStore OpenStore()
    {
        var store = new PostgresGroupingStore(SchemaConnectionString());
        _stores.Add(store);
        return store;
    }

    protected override (string Kind, string Location) WriterTarget() => ("postgres", _connectionString!);

    protected override async Task<DbConnection> OpenDatabaseAsync()
    {
        var connection = new NpgsqlConnection(SchemaConnectionString());
        await connection.OpenAsync();
        return connection;
    }

    protected override string VersionOneSchema => """
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
        """;

    /// <summary>The connection string into this test's own schema, created on first use.</summary>
    private string SchemaConnectionString()
    {
        if (_connectionString is null)
        {
            string server = ServerConnectionString();
            using (var connection = new NpgsqlConnection(server))
            {
                connection.Open();
                using var command = new NpgsqlCommand($"CREATE SCHEMA {_schema}", connection);
                command.ExecuteNonQuery();
            }

            _connectionString = new NpgsqlConnectionStringBuilder(server) { SearchPath = _schema }.ConnectionString;
        }

        return _connectionString;
    }

    public override void Dispose()
    {
        foreach (PostgresGroupingStore store in _stores)
        {
            store.DisposeAsync().AsTask().GetAwaiter().GetResult();
        }

        if (_connectionString is not null)
        {
            NpgsqlConnection.ClearAllPools();
            using var connection = new NpgsqlConnection(ServerConnectionString());
            connection.Open();
            using var command = new NpgsqlCommand($"DROP SCHEMA {_schema} CASCADE", connection);
            command.ExecuteNonQuery();
        }

        base.Dispose();
    }
}
