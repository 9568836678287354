using Grpc.Core;
using Microsoft.Extensions.Options;

namespace TopicGroups.Server.Services;

/// <summary>Shutdown settings, configuration section "TopicGroups:Shutdown".</summary>
internal sealed class GracefulShutdownOptions
{
    public const string SectionName = "TopicGroups:Shutdown";

    /// <summary>
    /// How long running groupings may go on after a stop signal before they are cancelled. It must be shorter than
    /// HostOptions:ShutdownTimeout, which bounds the whole stop: the difference is the time a cancelled grouping has
    /// to stop and answer its caller.
    /// </summary>
    /// <value>The default is 20 s (ASP.NET Core's default ShutdownTimeout is 30 s).</value>
    public int GracePeriodSeconds { get; set; } = 20;

    public void Validate(TimeSpan shutdownTimeout)
    {
        if (GracePeriodSeconds < 0)
        {
            throw new InvalidOperationException(
                $"Configuration {SectionName}:{nameof(GracePeriodSeconds)} is {GracePeriodSeconds}; use 0 (cancel at once) or more.");
        }

        if (TimeSpan.FromSeconds(GracePeriodSeconds) >= shutdownTimeout)
        {
            throw new InvalidOperationException(
                $"Configuration {SectionName}:{nameof(GracePeriodSeconds)} is {GracePeriodSeconds} s, not below HostOptions:ShutdownTimeout "
                + $"({shutdownTimeout.TotalSeconds:0.#} s): cancelled groupings would have no time left to answer. Lower the grace period "
                + "or raise HostOptions:ShutdownTimeout (leave about 5 s between them).");
        }
    }
}

/// <summary>
/// Stopping in order: when the host is asked to stop, new groupings (and those still waiting for a slot) get
/// UNAVAILABLE, so clients retry on another replica; running groupings go on for the grace period, then are
/// cancelled and answer UNAVAILABLE. Nothing is half-saved: a save is one transaction after a finished run.
/// </summary>
internal sealed class GracefulShutdown : IDisposable
{
    private readonly CancellationTokenSource _draining = new();
    private readonly CancellationTokenSource _stopRunning = new();
    private readonly TimeSpan _gracePeriod;
    private readonly ILogger<GracefulShutdown> _logger;
    private readonly CancellationTokenRegistration _registration;

    public GracefulShutdown(IHostApplicationLifetime lifetime, IOptions<GracefulShutdownOptions> options, ILogger<GracefulShutdown> logger)
    {
        _gracePeriod = TimeSpan.FromSeconds(options.Value.GracePeriodSeconds);
        _logger = logger;
        _registration = lifetime.ApplicationStopping.Register(BeginDraining);
    }

    /// <summary>Cancelled when the stop signal arrives: no new grouping starts after it.</summary>
    public CancellationToken Draining => _draining.Token;

    /// <summary>Cancelled when the grace period after the stop signal has passed: running groupings stop.</summary>
    public CancellationToken StopRunning => _stopRunning.Token;

    public bool IsDraining => _draining.IsCancellationRequested;

    /// <summary>Throws UNAVAILABLE once the server is stopping.</summary>
    public void ThrowIfDraining(ServerCallContext context)
    {
        if (IsDraining)
        {
            throw Unavailable(context, "This server is shutting down and starts no new groupings; retry on another replica. Nothing was computed or saved.");
        }
    }

    /// <summary>UNAVAILABLE for a grouping stopped (or never started) because the server is shutting down.</summary>
    public static RpcException Unavailable(ServerCallContext context, string message)
    {
        CallFacts.MarkRejection(context, ServerMetrics.Reasons.Shutdown);
        return new RpcException(new Status(StatusCode.Unavailable, message));
    }

    private void BeginDraining()
    {
        _logger.LogInformation("Stop signal: starting no new groupings; running ones have {GracePeriodSeconds} s to finish.", _gracePeriod.TotalSeconds);
        _draining.Cancel();
        _stopRunning.CancelAfter(_gracePeriod);
    }

    public void Dispose()
    {
        _registration.Dispose();
        _draining.Dispose();
        _stopRunning.Dispose();
    }
}
