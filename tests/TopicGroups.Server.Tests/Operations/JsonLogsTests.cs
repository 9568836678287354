using System.Collections.Concurrent;
using System.Diagnostics;
using System.Net;
using System.Net.Sockets;
using System.Text.Json;
using Grpc.Core;
using Grpc.Health.V1;
using Grpc.Net.Client;
using TopicGroups.Protos.V1;
using Xunit;
using Xunit.Abstractions;

namespace TopicGroups.Server.Tests.Operations;

/// <summary>
/// The stand-alone server (`dotnet TopicGroups.Server.dll`, as the image runs it) with JSON console logs selected by
/// configuration: every line on standard output is one JSON object, and a call leaves one with its facts, without the
/// caller's texts or authorization header.
/// </summary>
public sealed class JsonLogsTests(ITestOutputHelper output) : IDisposable
{
    private const string Secret = "tg-key-never-in-logs-91c2";
    private const string MarkerText = "json log marker text 5d0e";
    private readonly string _folder = Directory.CreateTempSubdirectory("topicgroups-jsonlogs-").FullName;

    public void Dispose() => Directory.Delete(_folder, recursive: true);

    [Fact]
    public async Task StandAloneServer_JsonFormatterConfigured_OneJsonObjectPerLineWithTheCallEvent()
    {
        int port = FreeLoopbackPort();
        var lines = new ConcurrentQueue<string>();
        using var server = new Process
        {
            StartInfo = new ProcessStartInfo("dotnet")
            {
                ArgumentList =
                {
                    Path.Combine(AppContext.BaseDirectory, "TopicGroups.Server.dll"),
                    $"--TopicGroups:Port={port}",
                    $"--TopicGroups:Storage:SqlitePath={Path.Combine(_folder, "groupings.db")}",
                    "--Logging:Console:FormatterName=json",
                },
                RedirectStandardOutput = true,
                RedirectStandardError = true,
                UseShellExecute = false,
            },
        };
        server.OutputDataReceived += (_, line) => { if (line.Data is not null) lines.Enqueue(line.Data); };
        server.Start();
        server.BeginOutputReadLine();
        try
        {
            using var channel = GrpcChannel.ForAddress($"http://127.0.0.1:{port}");
            await WaitForServingAsync(channel, server);

            var (documents, _) = TestBatches.WellSeparated(groupCount: 2, perTheme: 10, dimensions: 8, seed: 5);
            documents[3].Text = MarkerText;
            var request = new GroupDocumentsRequest { Options = new GroupingOptions { GroupCount = 2 } };
            request.Documents.AddRange(documents);
            await new TopicGroupsService.TopicGroupsServiceClient(channel)
                .GroupDocumentsAsync(request, new Metadata { { "authorization", "Bearer " + Secret } });

            JsonElement? callEvent = null;
            var stopwatch = Stopwatch.StartNew();
            while (callEvent is null && stopwatch.Elapsed < TimeSpan.FromSeconds(10))
            {
                callEvent = lines.Select(Parse).FirstOrDefault(e => e.GetProperty("Category").GetString()!.EndsWith(".CallTelemetry", StringComparison.Ordinal)
                    && e.GetProperty("State").GetProperty("Method").GetString() == "GroupDocuments");
                await Task.Delay(50);
            }

            foreach (string line in lines)
            {
                output.WriteLine(line);
            }

            Assert.NotNull(callEvent);
            JsonElement state = callEvent.Value.GetProperty("State");
            Assert.Equal("Information", callEvent.Value.GetProperty("LogLevel").GetString());
            Assert.Equal("OK", state.GetProperty("StatusCode").GetString());
            Assert.Equal("20", state.GetProperty("DocumentCount").ToString());
            Assert.Equal("default", state.GetProperty("Tenant").GetString());
            Assert.True(double.Parse(state.GetProperty("DurationMs").ToString(), System.Globalization.CultureInfo.InvariantCulture) > 0);
            Assert.All(lines, line => Parse(line));   // every line is one JSON object

            // ASP.NET Core's own per-request lines are below the default level: the call event is the call's one line.
            Assert.DoesNotContain(lines.Select(Parse), e => e.GetProperty("Category").GetString()!.StartsWith("Microsoft.AspNetCore", StringComparison.Ordinal)
                && e.GetProperty("LogLevel").GetString() == "Information");
            Assert.DoesNotContain(lines, line => line.Contains(Secret, StringComparison.Ordinal) || line.Contains(MarkerText, StringComparison.Ordinal));
        }
        finally
        {
            server.Kill(entireProcessTree: true);
            await server.WaitForExitAsync();
        }
    }

    private static JsonElement Parse(string line)
    {
        using JsonDocument document = JsonDocument.Parse(line);
        Assert.Equal(JsonValueKind.Object, document.RootElement.ValueKind);
        return document.RootElement.Clone();
    }

    private static async Task WaitForServingAsync(GrpcChannel channel, Process server)
    {
        var health = new Health.HealthClient(channel);
        var stopwatch = Stopwatch.StartNew();
        while (true)
        {
            if (server.HasExited)
            {
                Assert.Fail("the server exited: " + await server.StandardError.ReadToEndAsync());
            }

            try
            {
                if ((await health.CheckAsync(new HealthCheckRequest())).Status == HealthCheckResponse.Types.ServingStatus.Serving)
                {
                    return;
                }
            }
            catch (RpcException) when (stopwatch.Elapsed < TimeSpan.FromSeconds(30))
            {
            }

            Assert.True(stopwatch.Elapsed < TimeSpan.FromSeconds(30), "the server did not serve within 30 s");
            await Task.Delay(200);
        }
    }

    private static int FreeLoopbackPort()
    {
        using var listener = new TcpListener(IPAddress.Loopback, 0);
        listener.Start();
        return ((IPEndPoint)listener.LocalEndpoint).Port;
    }
}
