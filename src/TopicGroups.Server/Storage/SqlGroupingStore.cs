using System.Data.Common;
using TopicGroups.Core.Grouping;

namespace TopicGroups.Server.Storage;

/// <summary>
/// The SQL both stores share (ADO.NET, standard SQL plus INSERT … ON CONFLICT, which SQLite and PostgreSQL both
/// have). Tables: topicgroups_groupings (one row per grouping, centres as a blob) and topicgroups_groups (one row
/// per group). The schema is created and migrated by the service itself: topicgroups_schema_version holds the
/// version reached, and each pending step runs in one transaction under the store's write lock.
/// Both tables lead with a tenant column (schema version 2): names are unique per tenant and every statement
/// filters on the caller's tenant, so no query can see or touch another tenant's rows.
/// </summary>
public abstract class SqlGroupingStore : IGroupingStore
{
    private readonly SemaphoreSlim _migrationGate = new(1, 1);
    private volatile bool _migrated;

    /// <summary>Schema steps, in order; step i brings the schema to version i + 1.</summary>
    protected abstract IReadOnlyList<string> SchemaSteps { get; }

    /// <summary>Opens a connection with the dialect's session settings applied.</summary>
    protected abstract Task<DbConnection> OpenConnectionAsync(CancellationToken cancellationToken);

    /// <summary>Begins a transaction that holds the database's write lock (or the migration lock) from its start.</summary>
    protected abstract Task<DbTransaction> BeginWriteAsync(DbConnection connection, bool forMigration, CancellationToken cancellationToken);

    /// <summary>Begins a read-only transaction that sees one consistent state of the store.</summary>
    protected abstract Task<DbTransaction> BeginReadAsync(DbConnection connection, CancellationToken cancellationToken);

    /// <summary>The schema version this build writes.</summary>
    public int SchemaVersion => SchemaSteps.Count;

    public async Task SaveAsync(string tenant, SavedGrouping grouping, bool replace, CancellationToken cancellationToken)
    {
        ArgumentException.ThrowIfNullOrWhiteSpace(tenant);
        ArgumentNullException.ThrowIfNull(grouping);
        GroupingSnapshot snapshot = grouping.Snapshot;
        await using DbConnection connection = await OpenReadyAsync(cancellationToken);
        await using DbTransaction transaction = await BeginWriteAsync(connection, forMigration: false, cancellationToken);
        if (grouping.Request is SavedRequest request)
        {
            // Under the write lock: a retry that raced its first attempt finds the first's grouping (the unique
            // index on (tenant, request_id) backs this up for PostgreSQL, whose write transactions do not serialise).
            await using DbCommand find = Command(
                connection,
                transaction,
                "SELECT name FROM topicgroups_groupings WHERE tenant = @tenant AND request_id = @request",
                ("tenant", tenant),
                ("request", request.RequestId));
            if (await find.ExecuteScalarAsync(cancellationToken) is string earlier)
            {
                await transaction.RollbackAsync(cancellationToken);
                throw new RequestAlreadySavedException(earlier);
            }
        }

        // The parent row first: with replace it takes the row lock (PostgreSQL) so concurrent replacers queue here.
        string conflict = replace
            ? """
              ON CONFLICT (tenant, name) DO UPDATE SET created_at_us = excluded.created_at_us, group_count = excluded.group_count,
                document_count = excluded.document_count, dimensions = excluded.dimensions, objective = excluded.objective,
                highest_group_id = excluded.highest_group_id, outlier_score_threshold = excluded.outlier_score_threshold,
                outlier_minimum_group_size = excluded.outlier_minimum_group_size, options_json = excluded.options_json,
                centroids = excluded.centroids
              """
            : "ON CONFLICT (tenant, name) DO NOTHING";
        int inserted = await ExecuteAsync(
            connection,
            transaction,
            $"""
            INSERT INTO topicgroups_groupings (tenant, name, created_at_us, group_count, document_count, dimensions, objective,
              highest_group_id, outlier_score_threshold, outlier_minimum_group_size, options_json, centroids)
            VALUES (@tenant, @name, @created, @groups, @documents, @dimensions, @objective, @highest, @threshold, @minimum, @options, @centroids)
            {conflict}
            """,
            cancellationToken,
            ("tenant", tenant),
            ("name", grouping.Id),
            ("created", ToMicroseconds(grouping.CreatedAt)),
            ("groups", snapshot.Groups.Count),
            ("documents", snapshot.DocumentCount),
            ("dimensions", snapshot.Dimensions),
            ("objective", snapshot.Objective),
            ("highest", snapshot.HighestGroupId),
            ("threshold", snapshot.OutlierScoreThreshold),
            ("minimum", snapshot.OutlierMinimumGroupSize),
            ("options", SnapshotEncoding.EncodeOptions(grouping.Options)),
            ("centroids", SnapshotEncoding.EncodeCentroids(snapshot.Centroids)));
        if (inserted == 0)
        {
            await transaction.RollbackAsync(cancellationToken);
            throw new GroupingExistsException(grouping.Id);
        }

        await ExecuteAsync(
            connection, transaction, "DELETE FROM topicgroups_groups WHERE tenant = @tenant AND grouping_name = @name", cancellationToken, ("tenant", tenant), ("name", grouping.Id));
        await using (DbCommand insertGroup = connection.CreateCommand())
        {
            insertGroup.Transaction = transaction;
            insertGroup.CommandText = """
                INSERT INTO topicgroups_groups (tenant, grouping_name, position, group_id, size, cohesion, outlier_count,
                  similarity_median, similarity_mad, terms_json, examples_json)
                VALUES (@tenant, @name, @position, @id, @size, @cohesion, @outliers, @median, @mad, @terms, @examples)
                """;
            string[] names = ["tenant", "name", "position", "id", "size", "cohesion", "outliers", "median", "mad", "terms", "examples"];
            DbParameter[] parameters = names.Select(name => AddParameter(insertGroup, name, null)).ToArray();
            parameters[0].Value = tenant;
            parameters[1].Value = grouping.Id;
            for (int position = 0; position < snapshot.Groups.Count; position++)
            {
                SnapshotGroup group = snapshot.Groups[position];
                parameters[2].Value = position;
                parameters[3].Value = group.Id;
                parameters[4].Value = group.Size;
                parameters[5].Value = group.Cohesion;
                parameters[6].Value = group.OutlierCount;
                parameters[7].Value = group.SimilarityMedian;
                parameters[8].Value = group.SimilarityMad;
                parameters[9].Value = SnapshotEncoding.EncodeTerms(group.Terms);
                parameters[10].Value = SnapshotEncoding.EncodeExamples(group.Examples);
                await insertGroup.ExecuteNonQueryAsync(cancellationToken);
            }
        }

        // The request that made it (null clears a replaced grouping's), in the same transaction as the grouping.
        try
        {
            await ExecuteAsync(
                connection,
                transaction,
                "UPDATE topicgroups_groupings SET request_id = @request, request_hash = @hash WHERE tenant = @tenant AND name = @name",
                cancellationToken,
                ("request", (object?)grouping.Request?.RequestId ?? DBNull.Value),
                ("hash", (object?)grouping.Request?.ContentHash ?? DBNull.Value),
                ("tenant", tenant),
                ("name", grouping.Id));
            await transaction.CommitAsync(cancellationToken);
        }
        catch (DbException) when (grouping.Request is not null)
        {
            // PostgreSQL: a concurrent save of the same request committed first and the unique index refused this
            // one (the check above cannot see uncommitted rows). Name the winner; anything else is a real failure.
            await transaction.RollbackAsync(CancellationToken.None);
            SavedRequestRecord? earlier = await FindByRequestAsync(tenant, grouping.Request.RequestId, cancellationToken);
            if (earlier is null)
            {
                throw;
            }

            throw new RequestAlreadySavedException(earlier.GroupingId);
        }
    }

    public async Task<SavedRequestRecord?> FindByRequestAsync(string tenant, string requestId, CancellationToken cancellationToken)
    {
        ArgumentException.ThrowIfNullOrWhiteSpace(tenant);
        ArgumentException.ThrowIfNullOrEmpty(requestId);
        await using DbConnection connection = await OpenReadyAsync(cancellationToken);
        await using DbCommand command = Command(
            connection,
            null,
            "SELECT name, request_hash FROM topicgroups_groupings WHERE tenant = @tenant AND request_id = @request",
            ("tenant", tenant),
            ("request", requestId));
        await using DbDataReader reader = await command.ExecuteReaderAsync(cancellationToken);
        return await reader.ReadAsync(cancellationToken) ? new SavedRequestRecord(reader.GetString(0), reader.GetString(1)) : null;
    }

    public async Task<SavedGrouping?> GetAsync(string tenant, string id, CancellationToken cancellationToken)
    {
        ArgumentException.ThrowIfNullOrWhiteSpace(tenant);
        await using DbConnection connection = await OpenReadyAsync(cancellationToken);

        // Parent and groups in one transaction, so a concurrent replace is seen whole or not at all.
        await using DbTransaction transaction = await BeginReadAsync(connection, cancellationToken);
        SavedGroupingSummary? summary;
        byte[] centroidBytes;
        int highest;
        double threshold;
        int minimum;
        await using (DbCommand command = Command(
            connection,
            transaction,
            $"SELECT {SummaryColumns}, highest_group_id, outlier_score_threshold, outlier_minimum_group_size, centroids FROM topicgroups_groupings WHERE tenant = @tenant AND name = @name",
            ("tenant", tenant),
            ("name", id)))
        await using (DbDataReader reader = await command.ExecuteReaderAsync(cancellationToken))
        {
            if (!await reader.ReadAsync(cancellationToken))
            {
                return null;
            }

            summary = ReadSummary(reader);
            highest = reader.GetInt32(7);
            threshold = reader.GetDouble(8);
            minimum = reader.GetInt32(9);
            centroidBytes = reader.GetFieldValue<byte[]>(10);
        }

        var groups = new List<SnapshotGroup>(summary.GroupCount);
        await using (DbCommand command = Command(
            connection,
            transaction,
            """
            SELECT group_id, size, cohesion, outlier_count, terms_json, examples_json, similarity_median, similarity_mad
            FROM topicgroups_groups WHERE tenant = @tenant AND grouping_name = @name ORDER BY position
            """,
            ("tenant", tenant),
            ("name", id)))
        await using (DbDataReader reader = await command.ExecuteReaderAsync(cancellationToken))
        {
            while (await reader.ReadAsync(cancellationToken))
            {
                groups.Add(new SnapshotGroup(
                    reader.GetInt32(0),
                    reader.GetInt32(1),
                    reader.GetDouble(2),
                    reader.GetInt32(3),
                    SnapshotEncoding.DecodeTerms(reader.GetString(4)),
                    SnapshotEncoding.DecodeExamples(reader.GetString(5)),
                    reader.GetDouble(6),
                    reader.GetDouble(7)));
            }
        }

        await transaction.CommitAsync(cancellationToken);
        if (groups.Count != summary.GroupCount)
        {
            throw new InvalidDataException($"Grouping \"{id}\" lists {summary.GroupCount} groups but {groups.Count} are stored.");
        }

        var snapshot = new GroupingSnapshot
        {
            Centroids = SnapshotEncoding.DecodeCentroids(centroidBytes, summary.GroupCount, summary.Dimensions),
            Dimensions = summary.Dimensions,
            Groups = groups,
            DocumentCount = summary.DocumentCount,
            Objective = summary.Objective,
            OutlierScoreThreshold = threshold,
            OutlierMinimumGroupSize = minimum,
            HighestGroupId = highest,
        };
        return new SavedGrouping(summary.Id, summary.CreatedAt, snapshot, summary.Options);
    }

    public async Task<bool> ExistsAsync(string tenant, string id, CancellationToken cancellationToken)
    {
        ArgumentException.ThrowIfNullOrWhiteSpace(tenant);
        await using DbConnection connection = await OpenReadyAsync(cancellationToken);
        await using DbCommand command = Command(
            connection, null, "SELECT 1 FROM topicgroups_groupings WHERE tenant = @tenant AND name = @name", ("tenant", tenant), ("name", id));
        return await command.ExecuteScalarAsync(cancellationToken) is not null;
    }

    public async Task<GroupingPage> ListAsync(string tenant, int pageSize, GroupingPageToken? after, CancellationToken cancellationToken)
    {
        ArgumentException.ThrowIfNullOrWhiteSpace(tenant);
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(pageSize);
        await using DbConnection connection = await OpenReadyAsync(cancellationToken);
        string afterClause = after is null ? string.Empty : "AND (created_at_us < @created OR (created_at_us = @created AND name > @name))";
        await using DbCommand command = Command(
            connection,
            null,
            $"SELECT {SummaryColumns} FROM topicgroups_groupings WHERE tenant = @tenant {afterClause} ORDER BY created_at_us DESC, name ASC LIMIT @limit",
            ("tenant", tenant),
            ("limit", pageSize + 1));
        if (after is GroupingPageToken token)
        {
            AddParameter(command, "created", token.CreatedAtMicroseconds);
            AddParameter(command, "name", token.Id);
        }

        var page = new List<SavedGroupingSummary>(pageSize);
        bool more = false;
        await using (DbDataReader reader = await command.ExecuteReaderAsync(cancellationToken))
        {
            while (await reader.ReadAsync(cancellationToken))
            {
                if (page.Count == pageSize)
                {
                    more = true;
                    break;
                }

                page.Add(ReadSummary(reader));
            }
        }

        GroupingPageToken? next = more ? new GroupingPageToken(ToMicroseconds(page[^1].CreatedAt), page[^1].Id) : null;
        return new GroupingPage(page, next);
    }

    public async Task<bool> DeleteAsync(string tenant, string id, CancellationToken cancellationToken)
    {
        ArgumentException.ThrowIfNullOrWhiteSpace(tenant);
        await using DbConnection connection = await OpenReadyAsync(cancellationToken);
        await using DbTransaction transaction = await BeginWriteAsync(connection, forMigration: false, cancellationToken);
        await ExecuteAsync(
            connection, transaction, "DELETE FROM topicgroups_groups WHERE tenant = @tenant AND grouping_name = @name", cancellationToken, ("tenant", tenant), ("name", id));
        int deleted = await ExecuteAsync(
            connection, transaction, "DELETE FROM topicgroups_groupings WHERE tenant = @tenant AND name = @name", cancellationToken, ("tenant", tenant), ("name", id));
        await transaction.CommitAsync(cancellationToken);
        return deleted > 0;
    }

    /// <summary>Creates or migrates the schema (once per store object), then returns an open connection.</summary>
    public async Task CheckReachableAsync(CancellationToken cancellationToken)
    {
        // Through OpenReadyAsync: a store whose schema cannot be created or migrated is not usable either.
        await using DbConnection connection = await OpenReadyAsync(cancellationToken);
        await using DbCommand command = Command(connection, null, "SELECT MAX(version) FROM topicgroups_schema_version");
        await command.ExecuteScalarAsync(cancellationToken);
    }

    protected async Task<DbConnection> OpenReadyAsync(CancellationToken cancellationToken)
    {
        if (!_migrated)
        {
            await _migrationGate.WaitAsync(cancellationToken);
            try
            {
                if (!_migrated)
                {
                    await MigrateAsync(cancellationToken);
                    _migrated = true;
                }
            }
            finally
            {
                _migrationGate.Release();
            }
        }

        return await OpenConnectionAsync(cancellationToken);
    }

    private async Task MigrateAsync(CancellationToken cancellationToken)
    {
        await using DbConnection connection = await OpenConnectionAsync(cancellationToken);
        await using DbTransaction transaction = await BeginWriteAsync(connection, forMigration: true, cancellationToken);
        await ExecuteAsync(connection, transaction, "CREATE TABLE IF NOT EXISTS topicgroups_schema_version (version INTEGER NOT NULL)", cancellationToken);
        await using DbCommand read = Command(connection, transaction, "SELECT MAX(version) FROM topicgroups_schema_version");
        object? value = await read.ExecuteScalarAsync(cancellationToken);
        int version = value is null or DBNull ? 0 : Convert.ToInt32(value, System.Globalization.CultureInfo.InvariantCulture);
        if (version > SchemaVersion)
        {
            throw new InvalidOperationException(
                $"The grouping store's schema is at version {version}, newer than this server's {SchemaVersion}; run a newer TopicGroups server.");
        }

        for (int step = version; step < SchemaVersion; step++)
        {
            await ExecuteAsync(connection, transaction, SchemaSteps[step], cancellationToken);
            await ExecuteAsync(connection, transaction, "INSERT INTO topicgroups_schema_version (version) VALUES (@version)", cancellationToken, ("version", step + 1));
        }

        await transaction.CommitAsync(cancellationToken);
    }

    private const string SummaryColumns = "name, created_at_us, group_count, document_count, dimensions, objective, options_json";

    private static SavedGroupingSummary ReadSummary(DbDataReader reader) => new(
        reader.GetString(0),
        FromMicroseconds(reader.GetInt64(1)),
        reader.GetInt32(2),
        reader.GetInt32(3),
        reader.GetInt32(4),
        reader.GetDouble(5),
        SnapshotEncoding.DecodeOptions(reader.GetString(6)));

    private static long ToMicroseconds(DateTimeOffset time) => (time.UtcTicks - DateTimeOffset.UnixEpoch.UtcTicks) / TimeSpan.TicksPerMicrosecond;

    private static DateTimeOffset FromMicroseconds(long microseconds) =>
        new(DateTimeOffset.UnixEpoch.UtcTicks + microseconds * TimeSpan.TicksPerMicrosecond, TimeSpan.Zero);

    private static DbCommand Command(DbConnection connection, DbTransaction? transaction, string sql, params (string Name, object Value)[] parameters)
    {
        DbCommand command = connection.CreateCommand();
        command.Transaction = transaction;
        command.CommandText = sql;
        foreach (var (name, value) in parameters)
        {
            AddParameter(command, name, value);
        }

        return command;
    }

    private static async Task<int> ExecuteAsync(
        DbConnection connection, DbTransaction? transaction, string sql, CancellationToken cancellationToken, params (string Name, object Value)[] parameters)
    {
        await using DbCommand command = Command(connection, transaction, sql, parameters);
        return await command.ExecuteNonQueryAsync(cancellationToken);
    }

    private static DbParameter AddParameter(DbCommand command, string name, object? value)
    {
        DbParameter parameter = command.CreateParameter();
        parameter.ParameterName = "@" + name;
        parameter.Value = value ?? DBNull.Value;
        command.Parameters.Add(parameter);
        return parameter;
    }
}
