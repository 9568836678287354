using System.Collections.Concurrent;
using System.Net.Sockets;

namespace TopicGroups.Client.Tests;

/// <summary>
/// Sits between the client's channel and the in-memory server: records each grouping call (its method and
/// grpc-timeout header) and can fail the first N of them the way a refused connection fails (UNAVAILABLE).
/// </summary>
public sealed class RecordingHandler(HttpMessageHandler server) : DelegatingHandler(server)
{
    private int _failuresLeft;

    public ConcurrentQueue<string> Methods { get; } = new();

    public ConcurrentQueue<string?> Timeouts { get; } = new();

    public void FailNext(int calls) => Volatile.Write(ref _failuresLeft, calls);

    protected override Task<HttpResponseMessage> SendAsync(HttpRequestMessage request, CancellationToken cancellationToken)
    {
        string path = request.RequestUri!.AbsolutePath;
        if (path.StartsWith("/topicgroups.v1.TopicGroupsService/", StringComparison.Ordinal))
        {
            Methods.Enqueue(path[(path.LastIndexOf('/') + 1)..]);
            Timeouts.Enqueue(request.Headers.TryGetValues("grpc-timeout", out var values) ? values.Single() : null);
            if (Interlocked.Decrement(ref _failuresLeft) >= 0)
            {
                // What SocketsHttpHandler throws when nothing listens on the port.
                throw new HttpRequestException(
                    HttpRequestError.ConnectionError,
                    "Simulated: connection refused.",
                    new SocketException((int)SocketError.ConnectionRefused));
            }
        }

        return base.SendAsync(request, cancellationToken);
    }
}

/// <summary>Records progress synchronously, in order (System.Progress would post to the thread pool).</summary>
public sealed class RecordingProgress<T> : IProgress<T>
{
    private readonly List<T> _reports = [];

    public IReadOnlyList<T> Reports
    {
        get
        {
            lock (_reports)
            {
                return _reports.ToList();
            }
        }
    }

    public void Report(T value)
    {
        lock (_reports)
        {
            _reports.Add(value);
        }
    }
}
