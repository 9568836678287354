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

        var store = new PostgresGroupingStore(_connectionString);
        _stores.Add(store);
        return store;
    }

    protected override (string Kind, string Location) WriterTarget() => ("postgres", _connectionString!);

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
