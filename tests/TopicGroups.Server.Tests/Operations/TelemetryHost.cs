using System.Collections.Concurrent;
using System.Diagnostics.Metrics;
using Grpc.Net.Client;
using Microsoft.AspNetCore.Hosting;
using Microsoft.AspNetCore.Mvc.Testing;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Logging;
using TopicGroups.Protos.V1;

namespace TopicGroups.Server.Tests.Operations;

/// <summary>
/// The in-memory server (real gRPC pipeline) with every log event kept, at Debug and above for all categories, and a
/// listener on the server's own "TopicGroups.Server" meter (this host's meter factory only, so parallel tests do not mix).
/// </summary>
public sealed class TelemetryHost : IDisposable
{
    private readonly WebApplicationFactory<Program> _root = new();
    private readonly MeterListener _listener = new();

    public TelemetryHost(IReadOnlyDictionary<string, string?>? settings = null)
    {
        string database = Path.Combine(Path.GetTempPath(), $"topicgroups-telemetry-{Guid.NewGuid():N}.db");
        Factory = _root.WithWebHostBuilder(builder =>
        {
            builder.UseSetting("Logging:LogLevel:Default", "Debug");
            builder.UseSetting("TopicGroups:Storage:SqlitePath", database);
            foreach (var (key, value) in settings ?? new Dictionary<string, string?>())
            {
                builder.UseSetting(key, value);
            }

            builder.ConfigureLogging(logging => logging.AddProvider(new CapturingProvider(Logs)));
        });
        Channel = GrpcChannel.ForAddress(Factory.Server.BaseAddress, new GrpcChannelOptions { HttpHandler = Factory.Server.CreateHandler() });
        Client = new TopicGroupsService.TopicGroupsServiceClient(Channel);

        IMeterFactory meterFactory = Factory.Services.GetRequiredService<IMeterFactory>();
        _listener.InstrumentPublished = (instrument, listener) =>
        {
            if (instrument.Meter.Scope == meterFactory && instrument.Meter.Name == "TopicGroups.Server")
            {
                listener.EnableMeasurementEvents(instrument);
            }
        };
        _listener.SetMeasurementEventCallback<long>((instrument, value, tags, _) => Record(instrument, value, tags));
        _listener.SetMeasurementEventCallback<int>((instrument, value, tags, _) => Record(instrument, value, tags));
        _listener.SetMeasurementEventCallback<double>((instrument, value, tags, _) => Record(instrument, value, tags));
        _listener.Start();
    }

    public WebApplicationFactory<Program> Factory { get; }

    public GrpcChannel Channel { get; }

    public TopicGroupsService.TopicGroupsServiceClient Client { get; }

    public ConcurrentQueue<LogEvent> Logs { get; } = new();

    public ConcurrentQueue<Measurement> Measurements { get; } = new();

    /// <summary>The measurements of one instrument whose tags include every pair given.</summary>
    public IReadOnlyList<Measurement> Of(string instrument, params (string Key, object Value)[] tags) =>
        Measurements.Where(m => m.Instrument == instrument && tags.All(t => m.Tags.TryGetValue(t.Key, out object? v) && Equals(v, t.Value))).ToList();

    /// <summary>The per-call events of the server's call telemetry.</summary>
    public IReadOnlyList<LogEvent> CallEvents() => Logs.Where(e => e.EventName == "CallFinished").ToList();

    public void Dispose()
    {
        _listener.Dispose();
        Channel.Dispose();
        Factory.Dispose();
        _root.Dispose();
    }

    private void Record(Instrument instrument, double value, ReadOnlySpan<KeyValuePair<string, object?>> tags)
    {
        var copy = new Dictionary<string, object?>();
        foreach (var tag in tags)
        {
            copy[tag.Key] = tag.Value;
        }

        Measurements.Enqueue(new Measurement(instrument.Name, value, copy));
    }

    public sealed record Measurement(string Instrument, double Value, IReadOnlyDictionary<string, object?> Tags);

    /// <summary>A log event as a structured-log sink receives it: category, level, the rendered text and the named values.</summary>
    public sealed record LogEvent(string Category, LogLevel Level, string? EventName, string Message, IReadOnlyDictionary<string, object?> Values, string? Exception);

    private sealed class CapturingProvider(ConcurrentQueue<LogEvent> sink) : ILoggerProvider
    {
        public ILogger CreateLogger(string categoryName) => new CapturingLogger(categoryName, sink);

        public void Dispose()
        {
        }
    }

    private sealed class CapturingLogger(string category, ConcurrentQueue<LogEvent> sink) : ILogger
    {
        public IDisposable? BeginScope<TState>(TState state)
            where TState : notnull => null;

        public bool IsEnabled(LogLevel logLevel) => true;

        public void Log<TState>(LogLevel logLevel, EventId eventId, TState state, Exception? exception, Func<TState, Exception?, string> formatter)
        {
            var values = new Dictionary<string, object?>();
            if (state is IEnumerable<KeyValuePair<string, object?>> pairs)
            {
                foreach (var pair in pairs)
                {
                    values[pair.Key] = pair.Value;
                }
            }

            sink.Enqueue(new LogEvent(category, logLevel, eventId.Name, formatter(state, exception), values, exception?.ToString()));
        }
    }
}
