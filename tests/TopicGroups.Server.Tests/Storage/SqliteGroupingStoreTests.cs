using System.Data.Common;
using Microsoft.Data.Sqlite;
using TopicGroups.Server.Storage;
using Xunit;
using Xunit.Abstractions;

namespace TopicGroups.Server.Tests.Storage;

/// <summary>The store contract on a SQLite file in a fresh temporary folder, plus what is SQLite's own.</summary>
public sealed class SqliteGroupingStoreTests(ITestOutputHelper output) : GroupingStoreContractTests(output)
{
    private readonly string _folder = Directory.CreateTempSubdirectory("topicgroups-store-").FullName;

    private string DatabasePath => Path.Combine(_folder, "nested", "groupings.db");

    protected override IGroupingStore OpenStore() => new SqliteGroupingStore(DatabasePath);

    protected override (string Kind, string Location) WriterTarget() => ("sqlite", DatabasePath);

    protected override async Task<DbConnection> OpenDatabaseAsync()
    {
        Directory.CreateDirectory(Path.GetDirectoryName(DatabasePath)!);
        var connection = new SqliteConnection($"Data Source={DatabasePath}");
        await connection.OpenAsync();
        return connection;
    }

    protected override string VersionOneSchema => """
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
        """;

    public override void Dispose()
    {
        SqliteConnection.ClearAllPools();
        Directory.Delete(_folder, recursive: true);
        base.Dispose();
    }

    [Fact]
    public async Task Save_FreshPath_CreatesFolderAndFileInWriteAheadLogMode()
    {
        await OpenStore().SaveAsync(Tenant, Sample("first"), replace: false, CancellationToken.None);

        Assert.True(File.Exists(DatabasePath));
        await using var connection = new SqliteConnection($"Data Source={DatabasePath}");
        await connection.OpenAsync();
        await using SqliteCommand command = connection.CreateCommand();
        command.CommandText = "PRAGMA journal_mode; ";
        Assert.Equal("wal", (string?)await command.ExecuteScalarAsync());
        command.CommandText = "SELECT group_concat(version) FROM topicgroups_schema_version";
        Assert.Equal("1,2,3", (string?)await command.ExecuteScalarAsync());   // 3: request ids (docs/retries.md)
    }

    [Fact]
    public async Task Open_SchemaNewerThanThisServer_FailsSayingSo()
    {
        await OpenStore().SaveAsync(Tenant, Sample("first"), replace: false, CancellationToken.None);
        await using (var connection = new SqliteConnection($"Data Source={DatabasePath}"))
        {
            await connection.OpenAsync();
            await using SqliteCommand command = connection.CreateCommand();
            command.CommandText = "INSERT INTO topicgroups_schema_version (version) VALUES (99)";
            await command.ExecuteNonQueryAsync();
        }

        var exception = await Assert.ThrowsAsync<InvalidOperationException>(() => OpenStore().GetAsync(Tenant, "first", CancellationToken.None));

        Assert.Contains("version 99", exception.Message);
        Assert.Contains("newer", exception.Message);
    }
}
