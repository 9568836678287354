using System.Diagnostics.Metrics;
using Grpc.Core;
using TopicGroups.Core.Grouping;
using TopicGroups.Server.Embedding;

namespace TopicGroups.Server.Services;

/// <summary>
/// Runs the pipeline off the request thread and turns the call's cancellation into the right status:
/// DEADLINE_EXCEEDED when the caller's deadline passed, CANCELLED when the caller gave up.
/// </summary>
internal sealed class GroupingRunner
{
    public const string MeterName = "TopicGroups.Server";
    public const string ActiveRunsInstrument = "topicgroups.grouping.active_runs";

    private readonly GroupingPipeline _pipeline;
    private readonly GroupingAdmission _admission;
    private readonly UpDownCounter<int> _activeRuns;
    private readonly ServerMetrics _metrics;
    private readonly GracefulShutdown _shutdown;

    public GroupingRunner(
        GroupingPipeline pipeline, GroupingAdmission admission, IMeterFactory meterFactory, ServerMetrics metrics, GracefulShutdown shutdown)
    {
        _pipeline = pipeline;
        _admission = admission;
        _metrics = metrics;
        _shutdown = shutdown;
        Meter meter = meterFactory.Create(MeterName);
        _activeRuns = meter.CreateUpDownCounter<int>(
            ActiveRunsInstrument,
            unit: "{run}",
            description: "Groupings whose computation is running now; it drops when a cancelled run has really stopped.");
    }

    /// <summary>
    /// The caller's deadline timer starts before its request reaches the server, so near the deadline the caller's
    /// own cancellation (CANCELLED here) may come first; a cancellation this close to the deadline counts as the deadline.
    /// </summary>
    internal static readonly TimeSpan DeadlineSlack = TimeSpan.FromMilliseconds(500);

    /// <summary>True when the call's deadline has passed or is within <see cref="DeadlineSlack"/>.</summary>
    internal static bool DeadlineReached(ServerCallContext context) =>
        context.Deadline != DateTime.MaxValue && context.Deadline - DateTime.UtcNow <= DeadlineSlack;

    /// <param name="input">The validated batch.</param>
    /// <param name="progress">Grouping progress, from the computing thread.</param>
    /// <param name="context">The call: its token and deadline.</param>
    /// <param name="textsToEmbed">For a texts-only batch: embedded into input's matrix first, on the same thread.</param>
    /// <param name="embeddingProgress">(done, total) while texts are embedded.</param>
    public async Task<GroupingResult> RunAsync(
        GroupingInput input,
        Action<GroupingProgress>? progress,
        ServerCallContext context,
        TextsToEmbed? textsToEmbed = null,
        Action<int, int>? embeddingProgress = null)
    {
        // The caller's token, and the server's own stop once the shutdown grace period has passed.
        using var stopping = CancellationTokenSource.CreateLinkedTokenSource(context.CancellationToken, _shutdown.StopRunning);
        CancellationToken cancellationToken = stopping.Token;
        IDisposable? lease = null;
        try
        {
            // Memory estimate, then a slot: RESOURCE_EXHAUSTED (with RetryInfo when only busy) before any work starts.
            // A stopping server starts nothing, and stops waiting for a slot: UNAVAILABLE.
            _shutdown.ThrowIfDraining(context);
            lease = await _admission.EnterAsync(input, context, _shutdown.Draining);
            _shutdown.ThrowIfDraining(context);
            _activeRuns.Add(1);

            // A dedicated thread, not a pool thread: a run lasts seconds to minutes, and its parallel loops then
            // queue their work to the pool's global queue behind timers and I/O callbacks instead of ahead of
            // them. Run from a pool thread, a long run was seen to hold back deadline timers for minutes.
            // The awaited task ends only when Run returns or throws, so the counter tracks real CPU work.
            GroupingResult result = await Task.Factory.StartNew(
                () =>
                {
                    textsToEmbed?.Embed(embeddingProgress, cancellationToken);
                    return _pipeline.Run(input, progress, cancellationToken);
                },
                cancellationToken,
                TaskCreationOptions.LongRunning,
                TaskScheduler.Default);
            _metrics.RecordGrouped(input.Embeddings.Rows);
            return result;
        }
        catch (OperationCanceledException) when (!context.CancellationToken.IsCancellationRequested && _shutdown.IsDraining)
        {
            throw lease is null
                ? GracefulShutdown.Unavailable(context, "This server began shutting down while the grouping waited for a slot; retry on another replica. Nothing was computed or saved.")
                : GracefulShutdown.Unavailable(context, "This server is shutting down and its grace period for running groupings ended, so the grouping was stopped; retry on another replica. Nothing was saved.");
        }
        catch (OperationCanceledException) when (context.CancellationToken.IsCancellationRequested)
        {
            bool embedding = textsToEmbed is { Run: null };
            throw DeadlineReached(context)
                ? new RpcException(new Status(
                    StatusCode.DeadlineExceeded,
                    embedding
                        ? $"The server was still embedding the {textsToEmbed!.Count} texts when the call's deadline passed and stopped; "
                          + "allow a longer deadline (docs/embedding.md gives the throughput), or send embeddings with the documents."
                        : "The grouping did not finish before the call's deadline and was stopped; allow a longer deadline, "
                          + "or lower options.restart_count or options.max_iterations."))
                : new RpcException(new Status(StatusCode.Cancelled, "The caller cancelled the call; the grouping was stopped."));
        }
        finally
        {
            if (lease is not null)
            {
                _activeRuns.Add(-1);
                lease.Dispose();
            }
        }
    }
}
