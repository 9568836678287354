using System.Diagnostics;
using System.Net;
using System.Net.Sockets;
using System.Text;
using TopicGroups.Protos.V1;
using Xunit;

namespace TopicGroups.Server.Tests.Operations;

/// <summary>
/// Metric export over OTLP, switched on by the standard OTEL_EXPORTER_OTLP_ENDPOINT setting: a loopback listener
/// stands in for a collector and must receive the server's instruments after a grouping call.
/// </summary>
public sealed class MetricsExportTests
{
    [Fact]
    public async Task OtlpEndpointConfigured_GroupingCall_InstrumentsArriveAtTheCollector()
    {
        int port = FreeLoopbackPort();
        using var collector = new HttpListener();
        collector.Prefixes.Add($"http://127.0.0.1:{port}/");
        collector.Start();
        using var host = new SettingsHost(new()
        {
            ["OTEL_EXPORTER_OTLP_ENDPOINT"] = $"http://127.0.0.1:{port}",
            ["OTEL_EXPORTER_OTLP_PROTOCOL"] = "http/protobuf",   // HTTP/1.1 POSTs, which HttpListener can take
            ["OTEL_METRIC_EXPORT_INTERVAL"] = "200",
        });
        var (documents, _) = TestBatches.WellSeparated(groupCount: 2, perTheme: 10, dimensions: 8, seed: 9);
        var request = new GroupDocumentsRequest { Options = new GroupingOptions { GroupCount = 2 } };
        request.Documents.AddRange(documents);

        await host.Client.GroupDocumentsAsync(request);

        // Protobuf keeps strings as plain UTF-8, so the instrument names can be found in the raw export bodies.
        var received = new StringBuilder();
        var paths = new List<string>();
        var stopwatch = Stopwatch.StartNew();
        while (!received.ToString().Contains("topicgroups.documents.grouped", StringComparison.Ordinal) && stopwatch.Elapsed < TimeSpan.FromSeconds(20))
        {
            Task<HttpListenerContext> next = collector.GetContextAsync();
            if (await Task.WhenAny(next, Task.Delay(TimeSpan.FromSeconds(20))) != next)
            {
                break;
            }

            HttpListenerContext context = await next;
            paths.Add(context.Request.Url!.AbsolutePath);
            using var body = new MemoryStream();
            await context.Request.InputStream.CopyToAsync(body);
            received.Append(Encoding.UTF8.GetString(body.ToArray()));
            context.Response.StatusCode = 200;
            context.Response.Close();
        }

        string exported = received.ToString();
        Assert.Contains("/v1/metrics", paths);
        Assert.Contains("TopicGroups.Server", exported);
        Assert.Contains("topicgroups.calls", exported);
        Assert.Contains("topicgroups.call.duration", exported);
        Assert.Contains("topicgroups.documents.grouped", exported);
        Assert.Contains("topicgroups-server", exported);   // the service name of the exporting resource
    }

    private static int FreeLoopbackPort()
    {
        using var listener = new TcpListener(IPAddress.Loopback, 0);
        listener.Start();
        return ((IPEndPoint)listener.LocalEndpoint).Port;
    }

    private sealed class SettingsHost(Dictionary<string, string?> settings) : TestHost(settings);
}
