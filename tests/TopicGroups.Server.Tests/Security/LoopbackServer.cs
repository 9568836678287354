using System.Collections.Concurrent;
using Microsoft.AspNetCore.Builder;
using Microsoft.Data.Sqlite;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Logging;

namespace TopicGroups.Server.Tests.Security;

/// <summary>
/// The stand-alone server (ServerHost.Build, real Kestrel) on a free port, its groupings in a temporary SQLite file,
/// with every log line it writes captured, so tests can read what an operator's log would hold.
/// </summary>
public sealed class LoopbackServer : IAsyncDisposable
{
    private readonly string _folder;

    private LoopbackServer(WebApplication app, string folder, CapturedLogs logs)
    {
        App = app;
        _folder = folder;
        Logs = logs;
    }

    public WebApplication App { get; }

    public Uri Address => new(App.Urls.First());

    public CapturedLogs Logs { get; }

    /// <summary>Builds and starts the server; <paramref name="settings"/> are configuration keys and values.</summary>
    public static async Task<LoopbackServer> StartAsync(IReadOnlyDictionary<string, string> settings, LogLevel level = LogLevel.Warning)
    {
        string folder = Directory.CreateTempSubdirectory("topicgroups-loopback-").FullName;
        var all = new Dictionary<string, string>(settings) { ["TopicGroups:Storage:SqlitePath"] = Path.Combine(folder, "groupings.db") };
        string[] args = [$"--Logging:LogLevel:Default={level}", .. all.Select(setting => $"--{setting.Key}={setting.Value}")];
        var logs = new CapturedLogs();
        WebApplication? app = null;
        try
        {
            app = ServerHost.Build(args, port: 0);
            app.Services.GetRequiredService<ILoggerFactory>().AddProvider(logs);
            await app.StartAsync();
            return new LoopbackServer(app, folder, logs);
        }
        catch
        {
            if (app is not null)
            {
                await app.DisposeAsync();
            }

            Directory.Delete(folder, recursive: true);
            throw;
        }
    }

    public async ValueTask DisposeAsync()
    {
        await App.StopAsync();
        await App.DisposeAsync();
        SqliteConnection.ClearAllPools();
        Directory.Delete(_folder, recursive: true);
    }
}

/// <summary>Every log entry as text: level, category, message, each structured value, and any exception.</summary>
public sealed class CapturedLogs : ILoggerProvider
{
    public ConcurrentQueue<(LogLevel Level, string Category, string Text)> Entries { get; } = new();

    public string AllText => string.Join("\n", Entries.Select(entry => $"{entry.Level} {entry.Category}: {entry.Text}"));

    public ILogger CreateLogger(string categoryName) => new Logger(this, categoryName);

    public void Dispose()
    {
    }

    private sealed class Logger(CapturedLogs owner, string category) : ILogger
    {
        public IDisposable? BeginScope<TState>(TState state)
            where TState : notnull
        {
            owner.Entries.Enqueue((LogLevel.None, category, "scope: " + Describe(state)));
            return null;
        }

        public bool IsEnabled(LogLevel logLevel) => true;

        public void Log<TState>(LogLevel logLevel, EventId eventId, TState state, Exception? exception, Func<TState, Exception?, string> formatter)
        {
            owner.Entries.Enqueue((logLevel, category, $"{formatter(state, exception)} | {Describe(state)} | {exception}"));
        }

        private static string Describe(object? state) =>
            state is IEnumerable<KeyValuePair<string, object?>> values
                ? string.Join("; ", values.Select(pair => $"{pair.Key}={pair.Value}"))
                : state?.ToString() ?? string.Empty;
    }
}
