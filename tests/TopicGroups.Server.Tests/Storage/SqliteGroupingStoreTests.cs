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

    public override void Dispose()
    {
        SqliteConnection.ClearAllPools();
        Directory.Delete(_folder, recursive: true);
        base.Dispose();
    }

    [Fact]
    public async Task Save_FreshPath_CreatesFolderAndFileInWriteAheadLogMode()
    {
        await OpenStore().SaveAsync(Sample("first"), replace: false, CancellationToken.None);

        Assert.True(File.Exists(DatabasePath));
        await using var connection = new SqliteConnection($"Data Source={DatabasePath}");
        await connection.OpenAsync();
        await using SqliteCommand command = connection.CreateCommand();
        command.CommandText = "PRAGMA journal_mode; ";
        Assert.Equal("wal", (string?)await command.ExecuteScalarAsync());
        command.CommandText = "SELECT group_concat(version) FROM topicgroups_schema_version";
        Assert.Equal("1", (string?)await command.ExecuteScalarAsync());
    }

    [Fact]
    public async Task Open_SchemaNewerThanThisServer_FailsSayingSo()
    {
        await OpenStore().SaveAsync(Sample("first"), replace: false, CancellationToken.None);
        await using (var connection = new SqliteConnection($"Data Source={DatabasePath}"))
        {
            await connection.OpenAsync();
            await using SqliteCommand command = connection.CreateCommand();
            command.CommandText = "INSERT INTO topicgroups_schema_version (version) VALUES (99)";
            await command.ExecuteNonQueryAsync();
        }

        var exception = await Assert.ThrowsAsync<InvalidOperationException>(() => OpenStore().GetAsync("first", CancellationToken.None));

        Assert.Contains("version 99", exception.Message);
        Assert.Contains("newer", exception.Message);
    }
}
