using System.Diagnostics.Metrics;
using Microsoft.Extensions.DependencyInjection;

namespace TopicGroups.Server.Tests.Operations;

/// <summary>
/// Groupings computing now on one server, read from its "topicgroups.grouping.active_runs" instrument. The listener
/// asks for the current value of nothing: it adds up the changes it sees, so create it before the runs start.
/// </summary>
public sealed class ActiveRuns : IDisposable
{
    private readonly MeterListener _listener = new();
    private int _count;

    public ActiveRuns(IServiceProvider services)
    {
        IMeterFactory meterFactory = services.GetRequiredService<IMeterFactory>();
        _listener.InstrumentPublished = (instrument, listener) =>
        {
            if (instrument.Meter.Scope == meterFactory && instrument.Name == "topicgroups.grouping.active_runs")
            {
                listener.EnableMeasurementEvents(instrument);
            }
        };
        _listener.SetMeasurementEventCallback<int>((_, delta, _, _) => Interlocked.Add(ref _count, delta));
        _listener.Start();
    }

    public int Count => Volatile.Read(ref _count);

    public void Dispose() => _listener.Dispose();
}
