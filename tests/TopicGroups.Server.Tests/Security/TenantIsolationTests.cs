using Grpc.Core;
using Grpc.Core.Interceptors;
using Grpc.Health.V1;
using Microsoft.Data.Sqlite;
using Npgsql;
using TopicGroups.Protos.V1;
using TopicGroups.Server.Tests.Storage;
using Xunit;

namespace TopicGroups.Server.Tests.Security;

/// <summary>
/// Two tenants, each with its own API key, on one server, through the real gRPC path: tenant B can neither read,
/// list, route into, continue from, overwrite nor delete tenant A's groupings, and a grouping of another tenant
/// answers exactly like a missing one. Run once on SQLite and once on PostgreSQL.
/// </summary>
public abstract class TenantIsolationTests : IDisposable
{
    private readonly string _keyA = AccessKeys.NewKey();
    private readonly string _keyB = AccessKeys.NewKey();
    private AccessTestHost? _host;

    /// <summary>Where this run keeps saved groupings (configuration settings of TopicGroups:Storage).</summary>
    protected abstract Dictionary<string, string> StoreSettings();

    private AccessTestHost Host
    {
        get
        {
            if (_host is null)
            {
                Dictionary<string, string> settings = AccessKeys.Settings(("alpha", _keyA), ("beta", _keyB));
                foreach (var (key, value) in StoreSettings())
                {
                    settings[key] = value;
                }

                _host = new AccessTestHost(settings);
            }

            return _host;
        }
    }

    public virtual void Dispose()
    {
        _host?.Dispose();
        GC.SuppressFinalize(this);
    }

    private TopicGroupsService.TopicGroupsServiceClient ClientWith(string? key) =>
        key is null
            ? new TopicGroupsService.TopicGroupsServiceClient(Host.Channel)
            : new TopicGroupsService.TopicGroupsServiceClient(Host.Channel.Intercept(headers =>
            {
                headers.Add("authorization", "Bearer " + key);
                return headers;
            }));

    private static GroupDocumentsRequest Batch(GroupingOptions options, int seed)
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 3, perTheme: 12, dimensions: 16, seed: seed);
        var request = new GroupDocumentsRequest { Options = options };
        request.Documents.AddRange(documents);
        return request;
    }

    private static RouteDocumentsRequest RouteRequest(string grouping)
    {
        var (documents, _) = TestBatches.WellSeparated(groupCount: 3, perTheme: 2, dimensions: 16, seed: 9);
        var request = new RouteDocumentsRequest { Grouping = grouping };
        request.Documents.AddRange(documents);
        return request;
    }

    /// <summary>The detail tenant B gets for A's grouping must read as for a name nobody ever saved.</summary>
    private static void AssertLikeMissing(RpcException foreign, RpcException missing, string foreignName, string missingName)
    {
        Assert.Equal(StatusCode.NotFound, foreign.StatusCode);
        Assert.Equal(missing.StatusCode, foreign.StatusCode);
        Assert.Equal(missing.Status.Detail.Replace(missingName, foreignName, StringComparison.Ordinal), foreign.Status.Detail);
        Assert.Equal(missing.Trailers.Count, foreign.Trailers.Count);
    }

    [SkippableFact]
    public async Task OtherTenant_ReadListRouteReferenceOverwriteDelete_AllAnswerAsIfTheGroupingWereMissing()
    {
        var alpha = ClientWith(_keyA);
        var beta = ClientWith(_keyB);
        GroupDocumentsResponse saved = await alpha.GroupDocumentsAsync(Batch(new GroupingOptions { GroupCount = 3, Seed = 1, SaveAs = "alpha-week" }, seed: 1));
        Assert.Equal("groupings/alpha-week", saved.SavedGroupingName);
        RpcException missing = await RpcAssert.FailsAsync(StatusCode.NotFound, () => beta.GetGroupingAsync(new GetGroupingRequest { Name = "groupings/nobody-saved" }).ResponseAsync);

        // Read
        RpcException get = await RpcAssert.FailsAsync(StatusCode.NotFound, () => beta.GetGroupingAsync(new GetGroupingRequest { Name = "groupings/alpha-week" }).ResponseAsync);
        AssertLikeMissing(get, missing, "alpha-week", "nobody-saved");

        // List
        ListGroupingsResponse betaList = await beta.ListGroupingsAsync(new ListGroupingsRequest());
        Assert.Empty(betaList.Groupings);
        Assert.Equal(["groupings/alpha-week"], (await alpha.ListGroupingsAsync(new ListGroupingsRequest())).Groupings.Select(g => g.Name));

        // Route, unary and streamed
        RpcException route = await RpcAssert.FailsAsync(StatusCode.NotFound, () => beta.RouteDocumentsAsync(RouteRequest("groupings/alpha-week")).ResponseAsync);
        AssertLikeMissing(route, await RpcAssert.FailsAsync(StatusCode.NotFound, () => beta.RouteDocumentsAsync(RouteRequest("groupings/nobody-saved")).ResponseAsync), "alpha-week", "nobody-saved");
        await RpcAssert.FailsAsync(StatusCode.NotFound, async () =>
        {
            using var call = beta.StreamRouteDocuments();
            var chunk = new StreamRouteDocumentsRequest { ChunkIndex = 0, Grouping = "groupings/alpha-week" };
            chunk.Documents.AddRange(RouteRequest("unused").Documents);
            await call.RequestStream.WriteAsync(chunk);
            await call.RequestStream.CompleteAsync();
            await foreach (var _ in call.ResponseStream.ReadAllAsync())
            {
            }
        });

        // Use as the reference of a new grouping
        RpcException reference = await RpcAssert.FailsAsync(StatusCode.NotFound, () => beta.GroupDocumentsAsync(
            Batch(new GroupingOptions { GroupCount = 3, Reference = "groupings/alpha-week" }, seed: 2)).ResponseAsync);
        Assert.Contains("groupings/alpha-week", reference.Status.Detail);

        // Overwrite: B's replace_saved makes B's own grouping under that name; A's stays as it was.
        Grouping before = await alpha.GetGroupingAsync(new GetGroupingRequest { Name = "groupings/alpha-week", View = GroupingView.Full });
        GroupDocumentsResponse betaSave = await beta.GroupDocumentsAsync(
            Batch(new GroupingOptions { GroupCount = 2, Seed = 5, SaveAs = "alpha-week", ReplaceSaved = true }, seed: 3));
        Assert.Equal("groupings/alpha-week", betaSave.SavedGroupingName);
        Grouping after = await alpha.GetGroupingAsync(new GetGroupingRequest { Name = "groupings/alpha-week", View = GroupingView.Full });
        Assert.Equal(before, after);
        Assert.Equal(3, after.GroupCount);
        Assert.Equal(2, (await beta.GetGroupingAsync(new GetGroupingRequest { Name = "groupings/alpha-week" })).GroupCount);

        // Delete: B's delete removes B's copy only; a second delete finds nothing, and A's is untouched.
        await beta.DeleteGroupingAsync(new DeleteGroupingRequest { Name = "groupings/alpha-week" });
        RpcException delete = await RpcAssert.FailsAsync(StatusCode.NotFound, () => beta.DeleteGroupingAsync(new DeleteGroupingRequest { Name = "groupings/alpha-week" }).ResponseAsync);
        AssertLikeMissing(delete, await RpcAssert.FailsAsync(StatusCode.NotFound, () => beta.DeleteGroupingAsync(new DeleteGroupingRequest { Name = "groupings/nobody-saved" }).ResponseAsync), "alpha-week", "nobody-saved");
        Assert.Equal(before, await alpha.GetGroupingAsync(new GetGroupingRequest { Name = "groupings/alpha-week", View = GroupingView.Full }));
        Assert.Equal(6, (await alpha.RouteDocumentsAsync(RouteRequest("groupings/alpha-week"))).Documents.Count);
    }

    [SkippableFact]
    public async Task NoOrUnknownOrMalformedKey_Unauthenticated_NamesTheHeaderNeverTheKey()
    {
        string wrongKey = AccessKeys.NewKey();

        RpcException none = await RpcAssert.FailsAsync(StatusCode.Unauthenticated, () => ClientWith(null).ListGroupingsAsync(new ListGroupingsRequest()).ResponseAsync);
        RpcException unknown = await RpcAssert.FailsAsync(StatusCode.Unauthenticated, () => ClientWith(wrongKey).ListGroupingsAsync(new ListGroupingsRequest()).ResponseAsync);
        var malformedClient = new TopicGroupsService.TopicGroupsServiceClient(Host.Channel.Intercept(headers =>
        {
            headers.Add("authorization", _keyA);   // the key without "Bearer "
            return headers;
        }));
        RpcException malformed = await RpcAssert.FailsAsync(StatusCode.Unauthenticated, () => malformedClient.ListGroupingsAsync(new ListGroupingsRequest()).ResponseAsync);

        Assert.Contains("authorization: Bearer <key>", none.Status.Detail);
        Assert.Contains("authorization", unknown.Status.Detail);
        Assert.DoesNotContain(wrongKey, unknown.Status.Detail);
        Assert.Contains("Bearer", malformed.Status.Detail);
        Assert.DoesNotContain(_keyA, malformed.Status.Detail);
        await RpcAssert.FailsAsync(StatusCode.Unauthenticated, () => ClientWith(null).GroupDocumentsAsync(Batch(new GroupingOptions { GroupCount = 3 }, seed: 1)).ResponseAsync);
    }

    [SkippableFact]
    public async Task HealthAndReflection_NoKey_StillAnswer()
    {
        var health = new Health.HealthClient(Host.Channel);
        var reflection = new Grpc.Reflection.V1Alpha.ServerReflection.ServerReflectionClient(Host.Channel);

        HealthCheckResponse status = await health.CheckAsync(new HealthCheckRequest());
        using var call = reflection.ServerReflectionInfo();
        await call.RequestStream.WriteAsync(new Grpc.Reflection.V1Alpha.ServerReflectionRequest { ListServices = string.Empty });
        await call.RequestStream.CompleteAsync();
        Assert.True(await call.ResponseStream.MoveNext(CancellationToken.None));

        Assert.Equal(HealthCheckResponse.Types.ServingStatus.Serving, status.Status);
        Assert.Contains("topicgroups.v1.TopicGroupsService", call.ResponseStream.Current.ListServicesResponse.Service.Select(s => s.Name));
    }

    /// <summary>The in-memory server with API keys and a store of the test's choosing.</summary>
    private sealed class AccessTestHost(Dictionary<string, string> settings)
        : TestHost(settings.ToDictionary(pair => pair.Key, pair => (string?)pair.Value))
    {
    }
}

public sealed class SqliteTenantIsolationTests : TenantIsolationTests
{
    private readonly string _folder = Directory.CreateTempSubdirectory("topicgroups-tenants-").FullName;

    protected override Dictionary<string, string> StoreSettings() =>
        new() { ["TopicGroups:Storage:SqlitePath"] = Path.Combine(_folder, "groupings.db") };

    public override void Dispose()
    {
        base.Dispose();
        SqliteConnection.ClearAllPools();
        Directory.Delete(_folder, recursive: true);
    }
}

/// <summary>The same on PostgreSQL (tests/scripts/start-postgres.sh; skipped locally without it, required in CI).</summary>
public sealed class PostgresTenantIsolationTests : TenantIsolationTests
{
    private readonly string _schema = "tenants_" + Guid.NewGuid().ToString("N");
    private bool _created;

    protected override Dictionary<string, string> StoreSettings()
    {
        string server = PostgresGroupingStoreTests.ServerConnectionString();
        using (var connection = new NpgsqlConnection(server))
        {
            connection.Open();
            using var command = new NpgsqlCommand($"CREATE SCHEMA {_schema}", connection);
            command.ExecuteNonQuery();
        }

        _created = true;
        return new() { ["TopicGroups:Storage:PostgresConnectionString"] = new NpgsqlConnectionStringBuilder(server) { SearchPath = _schema }.ConnectionString };
    }

    public override void Dispose()
    {
        base.Dispose();
        if (_created)
        {
            NpgsqlConnection.ClearAllPools();
            using var connection = new NpgsqlConnection(PostgresGroupingStoreTests.ServerConnectionString());
            connection.Open();
            using var command = new NpgsqlCommand($"DROP SCHEMA {_schema} CASCADE", connection);
            command.ExecuteNonQuery();
        }
    }
}
