using System.Data.Common;
using System.Diagnostics;
using TopicGroups.Core.Grouping;
using TopicGroups.Core.Terms;
using TopicGroups.Server.Storage;
using Xunit;
using Xunit.Abstractions;

namespace TopicGroups.Server.Tests.Storage;

/// <summary>
/// What every grouping store must do, run once per implementation (SQLite, PostgreSQL): round trips, names,
/// replace, paging, deletes, concurrent saves, reopening, and a writer process killed mid-save.
/// </summary>
public abstract class GroupingStoreContractTests(ITestOutputHelper output) : IDisposable
{
    protected ITestOutputHelper Output { get; } = output;

    /// <summary>A store on an empty database of its own; the same database each call within one test.</summary>
    protected abstract IGroupingStore OpenStore();

    /// <summary>The writer process's arguments for this store: kind and location.</summary>
    protected abstract (string Kind, string Location) WriterTarget();

    /// <summary>A plain connection to the database <see cref="OpenStore"/> uses, to build an old schema by hand.</summary>
    protected abstract Task<DbConnection> OpenDatabaseAsync();

    /// <summary>
    /// Schema version 1 in this store's dialect, exactly as the server wrote it before tenants existed (a frozen
    /// copy: the migration test needs the old schema, not whatever the code writes today).
    /// </summary>
    protected abstract string VersionOneSchema { get; }

    /// <summary>The tenant the contract tests work in; the crash-test writer saves for the same one.</summary>
    protected const string Tenant = StoreWriterVersions.Tenant;

    private const string OtherTenant = "editors";

    /// <summary>The tenant of every call when no API keys are configured, and of groupings saved before tenants (docs/operations.md).</summary>
    private const string DefaultTenant = "default";

    public virtual void Dispose() => GC.SuppressFinalize(this);

    internal static SavedGrouping Sample(string id, int groups = 3, int dimensions = 5, int seed = 1, DateTimeOffset? createdAt = null)
    {
        var random = new Random(seed);
        float[] centroids = Enumerable.Range(0, groups * dimensions).Select(_ => (float)(random.NextDouble() * 2 - 1)).ToArray();
        var snapshotGroups = Enumerable.Range(0, groups).Select(g => new SnapshotGroup(
            Id: 2 * g + 1,
            Size: 10 + g,
            Cohesion: 0.8 - g * 0.01,
            OutlierCount: g,
            Terms: [new WeightedTerm($"cabin{g}", 3.25 + g), new WeightedTerm("late sailing", 1.5)],
            Examples: [new GroupExample(g, $"ticket-{g}", $"Ferry ticket {g}: the café on deck was closed — “again”", 0.91f)],
            SimilarityMedian: 0.85 + g * 0.001,
            SimilarityMad: 0.03)).ToArray();
        var snapshot = new GroupingSnapshot
        {
            Centroids = centroids,
            Dimensions = dimensions,
            Groups = snapshotGroups,
            DocumentCount = 42 + seed,
            Objective = 0.7712345678901,
            OutlierScoreThreshold = 3.5,
            OutlierMinimumGroupSize = 8,
            HighestGroupId = 2 * groups + 4,
        };
        var options = new GroupingOptions
        {
            GroupCount = groups, Seed = ulong.MaxValue - 1, RestartCount = 6, MaxIterations = 70, TermCount = 9, ExampleCount = 2, IncludeBigrams = true,
        };
        return new SavedGrouping(id, createdAt ?? new DateTimeOffset(2026, 12, 1, 9, 30, 15, TimeSpan.Zero).AddTicks(1234560), snapshot, options);
    }

    private static void AssertSame(SavedGrouping expected, SavedGrouping? actual)
    {
        Assert.NotNull(actual);
        Assert.Equal(expected.Id, actual.Id);
        Assert.Equal(expected.CreatedAt, actual.CreatedAt);
        Assert.Equal(expected.Options, actual.Options);
        GroupingSnapshot e = expected.Snapshot, a = actual.Snapshot;
        Assert.Equal(e.Centroids, a.Centroids);   // bit for bit
        Assert.Equal((e.Dimensions, e.DocumentCount, e.Objective, e.OutlierScoreThreshold, e.OutlierMinimumGroupSize, e.HighestGroupId),
            (a.Dimensions, a.DocumentCount, a.Objective, a.OutlierScoreThreshold, a.OutlierMinimumGroupSize, a.HighestGroupId));
        Assert.Equal(e.Groups.Count, a.Groups.Count);
        for (int g = 0; g < e.Groups.Count; g++)
        {
            SnapshotGroup x = e.Groups[g], y = a.Groups[g];
            Assert.Equal((x.Id, x.Size, x.Cohesion, x.OutlierCount, x.SimilarityMedian, x.SimilarityMad), (y.Id, y.Size, y.Cohesion, y.OutlierCount, y.SimilarityMedian, y.SimilarityMad));
            Assert.Equal(x.Terms, y.Terms);
            Assert.Equal(x.Examples, y.Examples);
        }
    }

    [SkippableFact]
    public async Task SaveThenGet_EveryPartRoundTrips()
    {
        IGroupingStore store = OpenStore();
        SavedGrouping saved = Sample("week-48");

        await store.SaveAsync(Tenant, saved, replace: false, CancellationToken.None);

        AssertSame(saved, await store.GetAsync(Tenant, "week-48", CancellationToken.None));
        Assert.True(await store.ExistsAsync(Tenant, "week-48", CancellationToken.None));
    }

    [SkippableFact]
    public async Task Save_WithRequest_FoundByItsIdInItsTenantOnlyAndASecondSaveOfTheIdRefused()
    {
        IGroupingStore store = OpenStore();
        var request = new SavedRequest("run-7", "ab12");
        await store.SaveAsync(Tenant, Sample("week-49") with { Request = request }, replace: false, CancellationToken.None);

        SavedRequestRecord? found = await store.FindByRequestAsync(Tenant, "run-7", CancellationToken.None);
        var refused = await Assert.ThrowsAsync<RequestAlreadySavedException>(
            () => store.SaveAsync(Tenant, Sample("week-49-again") with { Request = request }, replace: false, CancellationToken.None));
        await store.SaveAsync(OtherTenant, Sample("week-49") with { Request = request }, replace: false, CancellationToken.None);   // ids are per tenant

        Assert.Equal(new SavedRequestRecord("week-49", "ab12"), found);
        Assert.Equal("week-49", refused.Id);
        Assert.False(await store.ExistsAsync(Tenant, "week-49-again", CancellationToken.None));
        Assert.Null(await store.FindByRequestAsync(Tenant, "run-8", CancellationToken.None));
    }

    [SkippableFact]
    public async Task Save_SameRequestFromSixSavesAtOnce_OneGroupingSavedAndTheOthersToldWhich()
    {
        IGroupingStore store = OpenStore();
        var request = new SavedRequest("raced-1", "cd34");
        await store.ExistsAsync(Tenant, "warm-up", CancellationToken.None);   // schema created before the race
        var outcomes = await Task.WhenAll(Enumerable.Range(0, 6).Select(async i =>
        {
            try
            {
                await store.SaveAsync(Tenant, Sample($"raced-{i}", seed: i) with { Request = request }, replace: false, CancellationToken.None);
                return (Saved: $"raced-{i}", ToldOf: (string?)null);
            }
            catch (RequestAlreadySavedException earlier)
            {
                return (Saved: (string?)null, ToldOf: earlier.Id);
            }
        }));

        string winner = Assert.Single(outcomes, o => o.Saved is not null).Saved!;
        Assert.All(outcomes.Where(o => o.Saved is null), o => Assert.Equal(winner, o.ToldOf));
        Assert.Equal([winner], (await store.ListAsync(Tenant, 50, null, CancellationToken.None)).Groupings.Select(g => g.Id));
    }

    [SkippableFact]
    public async Task Get_UnknownName_Null()
    {
        IGroupingStore store = OpenStore();

        Assert.Null(await store.GetAsync(Tenant, "never-saved", CancellationToken.None));
        Assert.False(await store.ExistsAsync(Tenant, "never-saved", CancellationToken.None));
    }

    [SkippableFact]
    public async Task Save_NameTakenWithoutReplace_ThrowsAndKeepsTheFirst()
    {
        IGroupingStore store = OpenStore();
        SavedGrouping first = Sample("tickets", seed: 1);
        await store.SaveAsync(Tenant, first, replace: false, CancellationToken.None);

        var exception = await Assert.ThrowsAsync<GroupingExistsException>(() => store.SaveAsync(Tenant, Sample("tickets", seed: 2), replace: false, CancellationToken.None));

        Assert.Equal("tickets", exception.Id);
        AssertSame(first, await store.GetAsync(Tenant, "tickets", CancellationToken.None));
    }

    [SkippableFact]
    public async Task Save_NameTakenWithReplace_TheNewGroupingWholeAndNothingOfTheOld()
    {
        IGroupingStore store = OpenStore();
        await store.SaveAsync(Tenant, Sample("tickets", groups: 6, seed: 1), replace: false, CancellationToken.None);
        SavedGrouping second = Sample("tickets", groups: 2, dimensions: 7, seed: 2);

        await store.SaveAsync(Tenant, second, replace: true, CancellationToken.None);

        AssertSame(second, await store.GetAsync(Tenant, "tickets", CancellationToken.None));
    }

    [SkippableFact]
    public async Task Delete_ExistingThenUnknown_TrueThenFalse()
    {
        IGroupingStore store = OpenStore();
        await store.SaveAsync(Tenant, Sample("gone-soon"), replace: false, CancellationToken.None);
        await store.SaveAsync(Tenant, Sample("stays"), replace: false, CancellationToken.None);

        Assert.True(await store.DeleteAsync(Tenant, "gone-soon", CancellationToken.None));
        Assert.False(await store.DeleteAsync(Tenant, "gone-soon", CancellationToken.None));

        Assert.Null(await store.GetAsync(Tenant, "gone-soon", CancellationToken.None));
        Assert.NotNull(await store.GetAsync(Tenant, "stays", CancellationToken.None));
        await store.SaveAsync(Tenant, Sample("gone-soon", seed: 5), replace: false, CancellationToken.None);   // the name is free again
    }

    [SkippableFact]
    public async Task Tenants_SameNameInTwoTenants_EachGetsListsReplacesAndDeletesOnlyItsOwn()
    {
        IGroupingStore store = OpenStore();
        SavedGrouping ours = Sample("weekly", groups: 3, seed: 1);
        SavedGrouping theirs = Sample("weekly", groups: 5, seed: 2);
        await store.SaveAsync(Tenant, ours, replace: false, CancellationToken.None);
        await store.SaveAsync(OtherTenant, theirs, replace: false, CancellationToken.None);   // names are unique per tenant only
        await store.SaveAsync(OtherTenant, Sample("theirs-only", seed: 3), replace: false, CancellationToken.None);

        AssertSame(ours, await store.GetAsync(Tenant, "weekly", CancellationToken.None));
        AssertSame(theirs, await store.GetAsync(OtherTenant, "weekly", CancellationToken.None));
        Assert.Null(await store.GetAsync(Tenant, "theirs-only", CancellationToken.None));
        Assert.False(await store.ExistsAsync(Tenant, "theirs-only", CancellationToken.None));
        Assert.Equal(["weekly"], (await store.ListAsync(Tenant, 50, null, CancellationToken.None)).Groupings.Select(g => g.Id));

        await store.SaveAsync(Tenant, Sample("weekly", groups: 2, seed: 4), replace: true, CancellationToken.None);
        AssertSame(theirs, await store.GetAsync(OtherTenant, "weekly", CancellationToken.None));
        Assert.False(await store.DeleteAsync(Tenant, "theirs-only", CancellationToken.None));
        Assert.True(await store.DeleteAsync(Tenant, "weekly", CancellationToken.None));

        AssertSame(theirs, await store.GetAsync(OtherTenant, "weekly", CancellationToken.None));
        Assert.Equal(2, (await store.ListAsync(OtherTenant, 50, null, CancellationToken.None)).Groupings.Count);
    }

    [SkippableFact]
    public async Task Migrate_VersionOneDatabaseWithGroupings_OldRowsBelongToTheDefaultTenant()
    {
        // A database as the server left it before tenants: schema version 1 and one saved grouping of 2 groups × 3
        // dimensions, its rows written by hand in the encodings version 1 used.
        await using (DbConnection connection = await OpenDatabaseAsync())
        {
            await Execute(connection, VersionOneSchema);
            await Execute(connection, "CREATE TABLE topicgroups_schema_version (version INTEGER NOT NULL); INSERT INTO topicgroups_schema_version (version) VALUES (1)");
            float[] centres = [1, 0, 0, 0, 0.6f, 0.8f];
            await Execute(
                connection,
                """
                INSERT INTO topicgroups_groupings (name, created_at_us, group_count, document_count, dimensions, objective,
                  highest_group_id, outlier_score_threshold, outlier_minimum_group_size, options_json, centroids)
                VALUES ('before-tenants', 1796000000000000, 2, 40, 3, 0.75, 2, 3.5, 8, @options, @centres)
                """,
                ("options", """{"groupCount":2,"seed":7,"restartCount":4,"maxIterations":50,"termCount":5,"exampleCount":1,"includeBigrams":false,"outlierScoreThreshold":3.5,"outlierMinimumGroupSize":8}"""),
                ("centres", centres.SelectMany(BitConverter.GetBytes).ToArray()));
            for (int position = 0; position < 2; position++)
            {
                await Execute(
                    connection,
                    """
                    INSERT INTO topicgroups_groups (grouping_name, position, group_id, size, cohesion, outlier_count,
                      similarity_median, similarity_mad, terms_json, examples_json)
                    VALUES ('before-tenants', @position, @id, 20, 0.8, 1, 0.85, 0.03, @terms, @examples)
                    """,
                    ("position", position),
                    ("id", position + 1),
                    ("terms", $$"""[{"term":"refund{{position}}","weight":2.5}]"""),
                    ("examples", $$"""[{"index":{{position}},"id":"t-{{position}}","text":"Refund for the late ferry","similarity":0.9}]"""));
            }
        }

        IGroupingStore store = OpenStore();
        SavedGrouping? migrated = await store.GetAsync(DefaultTenant, "before-tenants", CancellationToken.None);

        Assert.NotNull(migrated);
        Assert.Equal(new DateTimeOffset(2026, 11, 30, 0, 53, 20, TimeSpan.Zero), migrated.CreatedAt);
        Assert.Equal([1, 0, 0, 0, 0.6f, 0.8f], migrated.Snapshot.Centroids);
        Assert.Equal([1, 2], migrated.Snapshot.Groups.Select(g => g.Id));
        Assert.Equal("refund1", migrated.Snapshot.Groups[1].Terms[0].Term);
        Assert.Equal((7UL, 4), (migrated.Options.Seed, migrated.Options.RestartCount));
        Assert.Null(await store.GetAsync(Tenant, "before-tenants", CancellationToken.None));
        Assert.Equal(["before-tenants"], (await store.ListAsync(DefaultTenant, 50, null, CancellationToken.None)).Groupings.Select(g => g.Id));

        // The name is now unique per tenant: another tenant may use it, and the default tenant's copy stays whole.
        await store.SaveAsync(Tenant, Sample("before-tenants"), replace: false, CancellationToken.None);
        await Assert.ThrowsAsync<GroupingExistsException>(
            () => store.SaveAsync(DefaultTenant, Sample("before-tenants"), replace: false, CancellationToken.None));
        Assert.Equal(2, (await store.GetAsync(DefaultTenant, "before-tenants", CancellationToken.None))!.Snapshot.Groups.Count);
        await using (DbConnection connection = await OpenDatabaseAsync())
        await using (DbCommand versions = connection.CreateCommand())
        {
            versions.CommandText = "SELECT MAX(version) FROM topicgroups_schema_version";   // 2: tenants; 3: request ids
            Assert.Equal(3, Convert.ToInt32(await versions.ExecuteScalarAsync(), System.Globalization.CultureInfo.InvariantCulture));
        }
    }

    private static async Task Execute(DbConnection connection, string sql, params (string Name, object Value)[] parameters)
    {
        await using DbCommand command = connection.CreateCommand();
        command.CommandText = sql;
        foreach (var (name, value) in parameters)
        {
            DbParameter parameter = command.CreateParameter();
            parameter.ParameterName = "@" + name;
            parameter.Value = value;
            command.Parameters.Add(parameter);
        }

        await command.ExecuteNonQueryAsync();
    }

    [SkippableFact]
    public async Task List_InPagesOfThree_NewestFirstEveryGroupingOnce()
    {
        IGroupingStore store = OpenStore();
        var start = new DateTimeOffset(2026, 11, 2, 8, 0, 0, TimeSpan.Zero);
        // Seven groupings; two share a creation time, so the order falls back to the name.
        string[] names = ["a-1", "a-2", "a-3", "a-4", "a-5", "a-6", "a-7"];
        for (int i = 0; i < names.Length; i++)
        {
            await store.SaveAsync(Tenant, Sample(names[i], createdAt: start.AddMinutes(i == 6 ? 5 : i)), replace: false, CancellationToken.None);
        }

        var listed = new List<string>();
        GroupingPageToken? token = null;
        int pages = 0;
        do
        {
            GroupingPage page = await store.ListAsync(Tenant, 3, token, CancellationToken.None);
            Assert.InRange(page.Groupings.Count, 1, 3);
            listed.AddRange(page.Groupings.Select(g => g.Id));
            token = page.Next;
            pages++;
        }
        while (token is not null);

        Assert.Equal(["a-6", "a-7", "a-5", "a-4", "a-3", "a-2", "a-1"], listed);
        Assert.Equal(3, pages);
        SavedGroupingSummary first = (await store.ListAsync(Tenant, 1, null, CancellationToken.None)).Groupings[0];
        Assert.Equal((3, 43, 5), (first.GroupCount, first.DocumentCount, first.Dimensions));
    }

    [SkippableFact]
    public async Task List_Empty_NoGroupingsNoNextPage()
    {
        GroupingPage page = await OpenStore().ListAsync(Tenant, 50, null, CancellationToken.None);

        Assert.Empty(page.Groupings);
        Assert.Null(page.Next);
    }

    [SkippableFact]
    public async Task ConcurrentSaves_DistinctNames_EveryGroupingStoredWhole()
    {
        IGroupingStore store = OpenStore();
        SavedGrouping[] groupings = Enumerable.Range(0, 24).Select(i => Sample($"parallel-{i}", groups: 20, dimensions: 64, seed: i)).ToArray();

        await Parallel.ForEachAsync(groupings, new ParallelOptions { MaxDegreeOfParallelism = 8 },
            async (grouping, token) => await store.SaveAsync(Tenant, grouping, replace: false, token));

        foreach (SavedGrouping grouping in groupings)
        {
            AssertSame(grouping, await store.GetAsync(Tenant, grouping.Id, CancellationToken.None));
        }
    }

    [SkippableFact]
    public async Task ConcurrentSaves_OneNameWithoutReplace_ExactlyOneWins()
    {
        IGroupingStore store = OpenStore();
        SavedGrouping[] attempts = Enumerable.Range(0, 12).Select(i => Sample("contested", groups: 10, seed: i)).ToArray();
        int lost = 0;

        await Parallel.ForEachAsync(attempts, new ParallelOptions { MaxDegreeOfParallelism = 6 }, async (grouping, token) =>
        {
            try
            {
                await store.SaveAsync(Tenant, grouping, replace: false, token);
            }
            catch (GroupingExistsException)
            {
                Interlocked.Increment(ref lost);
            }
        });

        Assert.Equal(attempts.Length - 1, lost);
        SavedGrouping? stored = await store.GetAsync(Tenant, "contested", CancellationToken.None);
        AssertSame(attempts.Single(a => a.Snapshot.DocumentCount == stored!.Snapshot.DocumentCount), stored);
    }

    [SkippableFact]
    public async Task ConcurrentSaves_OneNameWithReplace_OneWholeVersionRemains()
    {
        IGroupingStore store = OpenStore();
        // Different group counts per version: a mix of two saves would show as a wrong count or foreign groups.
        SavedGrouping[] versions = Enumerable.Range(0, 12).Select(i => Sample("replaced", groups: 3 + i, seed: i)).ToArray();

        await Parallel.ForEachAsync(versions, new ParallelOptions { MaxDegreeOfParallelism = 6 },
            async (grouping, token) => await store.SaveAsync(Tenant, grouping, replace: true, token));

        SavedGrouping? stored = await store.GetAsync(Tenant, "replaced", CancellationToken.None);
        AssertSame(versions.Single(v => v.Snapshot.Groups.Count == stored!.Snapshot.Groups.Count), stored);
    }

    [SkippableFact]
    public async Task Reopen_NewStoreOnTheSameDatabase_SeesSavedGroupingsAndKeepsTheSchema()
    {
        SavedGrouping saved = Sample("survives");
        await OpenStore().SaveAsync(Tenant, saved, replace: false, CancellationToken.None);

        IGroupingStore reopened = OpenStore();

        AssertSame(saved, await reopened.GetAsync(Tenant, "survives", CancellationToken.None));
        await reopened.SaveAsync(Tenant, Sample("after-reopen"), replace: false, CancellationToken.None);
    }

    [SkippableFact]
    public async Task WriterKilledMidSave_PreviousVersionStillReadableAndWhole()
    {
        // A child process saves versions 1, 2, 3, ... of one grouping (300 groups × 384 dimensions each, one
        // transaction per version) and is killed at a random moment, three times over. Each time the store must
        // open and hold one whole version: at least the last one the writer reported committed.
        IGroupingStore store = OpenStore();   // creates the database and schema
        (string kind, string location) = WriterTarget();
        string writer = Path.Combine(AppContext.BaseDirectory, "TopicGroups.StoreWriter.dll");
        var random = new Random(20261202);
        for (int round = 0; round < 3; round++)
        {
            int reported = await RunWriterUntilKilledAsync(writer, kind, location, minimumVersions: 3, killAfter: TimeSpan.FromMilliseconds(random.Next(5, 80)));

            SavedGrouping? stored = await OpenStore().GetAsync(Tenant, "crash-test", CancellationToken.None);
            Assert.NotNull(stored);
            int version = StoreWriterVersions.VersionOf(stored);   // throws if the parts come from different saves
            Output.WriteLine($"round {round}: writer reported version {reported} committed; the store holds version {version}");
            Assert.InRange(version, reported, reported + 1);   // +1: committed, killed before it could print
        }

        GC.KeepAlive(store);
    }

    private async Task<int> RunWriterUntilKilledAsync(string writer, string kind, string location, int minimumVersions, TimeSpan killAfter)
    {
        var start = new ProcessStartInfo("dotnet")
        {
            RedirectStandardOutput = true,
            RedirectStandardError = true,
            UseShellExecute = false,
        };
        foreach (string argument in new[] { writer, kind, location, "crash-test" })
        {
            start.ArgumentList.Add(argument);
        }

        using Process process = Process.Start(start) ?? throw new InvalidOperationException("could not start dotnet");
        int reported = 0;
        var errors = new System.Text.StringBuilder();
        process.ErrorDataReceived += (_, e) => { lock (errors) { errors.AppendLine(e.Data); } };
        process.BeginErrorReadLine();
        using var timeout = new CancellationTokenSource(TimeSpan.FromSeconds(120));
        try
        {
            while (reported < minimumVersions)
            {
                string? line = await process.StandardOutput.ReadLineAsync(timeout.Token);
                if (line is null)
                {
                    lock (errors)
                    {
                        throw new InvalidOperationException($"The writer exited after version {reported}: {errors}");
                    }
                }

                reported = int.Parse(line.AsSpan("saved ".Length), System.Globalization.CultureInfo.InvariantCulture);
            }

            // Let it get into the next save(s), then kill it where it stands (SIGKILL: no clean-up runs).
            await Task.Delay(killAfter);
        }
        finally
        {
            process.Kill(entireProcessTree: true);
            await process.WaitForExitAsync(CancellationToken.None);
        }

        // Lines printed before the kill are still in the pipe.
        string rest = await process.StandardOutput.ReadToEndAsync(CancellationToken.None);
        foreach (string line in rest.Split('\n', StringSplitOptions.RemoveEmptyEntries))
        {
            reported = int.Parse(line.AsSpan("saved ".Length), System.Globalization.CultureInfo.InvariantCulture);
        }

        return reported;
    }
}
