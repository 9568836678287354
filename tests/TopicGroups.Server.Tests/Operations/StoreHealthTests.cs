using System.Diagnostics;
using System.Net;
using System.Net.Sockets;
using Grpc.Health.V1;
using Npgsql;
using TopicGroups.Server.Tests.Storage;
using Xunit;
using Xunit.Abstractions;
using ServingStatus = Grpc.Health.V1.HealthCheckResponse.Types.ServingStatus;

namespace TopicGroups.Server.Tests.Operations;

/// <summary>
/// grpc.health.v1 through the real gRPC path: the whole server ("", readiness) is SERVING only while the saved-grouping
/// store answers; "liveness" covers the grouping pipeline alone and stays SERVING through a store outage.
/// </summary>
public sealed class StoreHealthTests(ITestOutputHelper output) : IDisposable
{
    private readonly string _folder = Directory.CreateTempSubdirectory("topicgroups-health-").FullName;

    public void Dispose() => Directory.Delete(_folder, recursive: true);

    [Fact]
    public async Task Check_SqliteFileCanBeCreated_Serving()
    {
        using var host = new SettingsHost(new() { ["TopicGroups:Storage:SqlitePath"] = Path.Combine(_folder, "groupings.db") });

        Assert.Equal(ServingStatus.Serving, await StatusAsync(host, string.Empty));
        Assert.Equal(ServingStatus.Serving, await StatusAsync(host, "liveness"));
    }

    [Fact]
    public async Task Check_SqlitePathUnwritable_NotServingButLive()
    {
        // A path below a regular file: no folder can be made there, for root too (file permissions would not stop root).
        string blocker = Path.Combine(_folder, "not-a-folder");
        await File.WriteAllTextAsync(blocker, "a file where the store's folder should be");
        using var host = new SettingsHost(new() { ["TopicGroups:Storage:SqlitePath"] = Path.Combine(blocker, "groupings.db") });

        Assert.Equal(ServingStatus.NotServing, await StatusAsync(host, string.Empty));
        Assert.Equal(ServingStatus.Serving, await StatusAsync(host, "liveness"));
    }

    [SkippableFact]
    public async Task Check_PostgresReachable_Serving()
    {
        string server = PostgresGroupingStoreTests.ServerConnectionString();
        string schema = "health_" + Guid.NewGuid().ToString("N");
        await using (var connection = new NpgsqlConnection(server))
        {
            await connection.OpenAsync();
            await new NpgsqlCommand($"CREATE SCHEMA {schema}", connection).ExecuteNonQueryAsync();
        }

        try
        {
            string inSchema = new NpgsqlConnectionStringBuilder(server) { SearchPath = schema }.ConnectionString;
            using var host = new SettingsHost(new() { ["TopicGroups:Storage:PostgresConnectionString"] = inSchema });

            Assert.Equal(ServingStatus.Serving, await StatusAsync(host, string.Empty));
        }
        finally
        {
            await using var connection = new NpgsqlConnection(server);
            await connection.OpenAsync();
            await new NpgsqlCommand($"DROP SCHEMA {schema} CASCADE", connection).ExecuteNonQueryAsync();
        }
    }

    [SkippableFact]
    public async Task Check_PostgresOnPortWithNoServer_NotServingWithinProbeTimeout()
    {
        // The real server's connection string pointed at a loopback port where nothing listens: PostgreSQL "down".
        string server = PostgresGroupingStoreTests.ServerConnectionString();
        string down = new NpgsqlConnectionStringBuilder(server) { Port = FreeLoopbackPort(), Timeout = 30 }.ConnectionString;
        using var host = new SettingsHost(new() { ["TopicGroups:Storage:PostgresConnectionString"] = down });

        var stopwatch = Stopwatch.StartNew();
        ServingStatus readiness = await StatusAsync(host, string.Empty);
        TimeSpan answered = stopwatch.Elapsed;
        output.WriteLine($"readiness {readiness} after {answered.TotalMilliseconds:F0} ms");

        Assert.Equal(ServingStatus.NotServing, readiness);
        Assert.True(answered < TimeSpan.FromSeconds(5), $"the check took {answered}; Kubernetes probes give up after 5 s");
        Assert.Equal(ServingStatus.Serving, await StatusAsync(host, "liveness"));
    }

    private static async Task<ServingStatus> StatusAsync(TestHost host, string service)
    {
        var health = new Health.HealthClient(host.Channel);
        HealthCheckResponse response = await health.CheckAsync(new HealthCheckRequest { Service = service });
        return response.Status;
    }

    private static int FreeLoopbackPort()
    {
        using var listener = new TcpListener(IPAddress.Loopback, 0);
        listener.Start();
        return ((IPEndPoint)listener.LocalEndpoint).Port;
    }

    private sealed class SettingsHost(Dictionary<string, string?> settings) : TestHost(settings);
}
