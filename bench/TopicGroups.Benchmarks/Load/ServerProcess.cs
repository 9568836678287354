using System.Diagnostics;
using System.Net;
using System.Net.Sockets;
using Grpc.Net.Client;
using TopicGroups.Client;

namespace TopicGroups.Benchmarks.Load;

/// <summary>
/// The TopicGroups server as a child process on a loopback port, with its saved groupings in one SQLite file: started,
/// awaited until its health check says SERVING, measured (peak resident memory) and killed, by its own process id.
/// </summary>
public sealed class ServerProcess : IDisposable
{
    private readonly Process _process;
    private readonly StringWriter _log = new();

    private ServerProcess(Process process, Uri address)
    {
        _process = process;
        Address = address;
    }

    public Uri Address { get; }

    public int ProcessId => _process.Id;

    /// <summary>What the server wrote to stdout and stderr (warnings and errors; Information is off).</summary>
    public string Log
    {
        get
        {
            lock (_log)
            {
                return _log.ToString();
            }
        }
    }

    /// <summary>The server executable built beside this program (it references the server project).</summary>
    public static string DefaultExecutable => Path.Combine(AppContext.BaseDirectory, "TopicGroups.Server.dll");

    /// <summary>A loopback port free at this moment (the OS picks it), so a restarted server can take the same one.</summary>
    public static int FreePort()
    {
        var listener = new TcpListener(IPAddress.Loopback, 0);
        listener.Start();
        int port = ((IPEndPoint)listener.LocalEndpoint).Port;
        listener.Stop();
        return port;
    }

    public static ServerProcess Start(string executable, int port, string sqlitePath)
    {
        var start = new ProcessStartInfo("dotnet")
        {
            WorkingDirectory = Path.GetDirectoryName(executable)!,
            RedirectStandardOutput = true,
            RedirectStandardError = true,
            UseShellExecute = false,
        };
        foreach (string argument in new[]
        {
            executable,
            $"--TopicGroups:Port={port}",
            $"--TopicGroups:Storage:SqlitePath={sqlitePath}",
            "--TopicGroups:Embedding:Enabled=false",   // the load sends embeddings; no model to load at start
            "--Logging:LogLevel:Default=Warning",
        })
        {
            start.ArgumentList.Add(argument);
        }

        Process process = Process.Start(start) ?? throw new InvalidOperationException($"Could not start {executable}.");
        var server = new ServerProcess(process, new Uri($"http://127.0.0.1:{port}"));
        process.OutputDataReceived += (_, line) => server.Append(line.Data);
        process.ErrorDataReceived += (_, line) => server.Append(line.Data);
        process.BeginOutputReadLine();
        process.BeginErrorReadLine();
        return server;
    }

    /// <summary>Polls grpc.health.v1 until SERVING; throws with the server's log when it exits or takes too long.</summary>
    public async Task WaitUntilServingAsync(TimeSpan limit, CancellationToken cancellationToken = default)
    {
        using var channel = GrpcChannel.ForAddress(Address);
        var client = new TopicGroupsClient(channel, new TopicGroupsClientOptions { MaxRetryAttempts = 0 });
        var waited = Stopwatch.StartNew();
        while (true)
        {
            if (_process.HasExited)
            {
                throw new InvalidOperationException($"The server exited with code {_process.ExitCode} before serving:\n{Log}");
            }

            try
            {
                if (await client.CheckHealthAsync(cancellationToken))
                {
                    return;
                }
            }
            catch (Grpc.Core.RpcException) when (waited.Elapsed < limit)
            {
                // not listening yet
            }

            if (waited.Elapsed >= limit)
            {
                throw new TimeoutException($"The server did not report SERVING within {limit}:\n{Log}");
            }

            await Task.Delay(100, cancellationToken);
        }
    }

    /// <summary>Peak resident set size of the process so far (Linux VmHWM), in bytes; 0 where /proc is missing.</summary>
    public long PeakMemoryBytes()
    {
        string status = $"/proc/{_process.Id}/status";
        if (_process.HasExited || !File.Exists(status))
        {
            return 0;
        }

        foreach (string line in File.ReadLines(status))
        {
            if (line.StartsWith("VmHWM:", StringComparison.Ordinal))
            {
                // "VmHWM:    123456 kB"
                return long.Parse(line["VmHWM:".Length..].Trim().Split(' ')[0], System.Globalization.CultureInfo.InvariantCulture) * 1024;
            }
        }

        return 0;
    }

    /// <summary>Ends the process at once (SIGKILL): no graceful shutdown, as a crash or an OOM kill would.</summary>
    public void Kill()
    {
        if (!_process.HasExited)
        {
            _process.Kill(entireProcessTree: true);
            _process.WaitForExit();
        }
    }

    public void Dispose()
    {
        Kill();
        _process.Dispose();
    }

    private void Append(string? line)
    {
        if (line is not null)
        {
            lock (_log)
            {
                _log.WriteLine(line);
            }
        }
    }
}
