using System.Threading.Channels;
using Grpc.Core;
using TopicGroups.Core.Grouping;
using TopicGroups.Server.Mapping;
using Proto = TopicGroups.Protos.V1;

namespace TopicGroups.Server.Services;

/// <summary>
/// Carries progress from the computing thread to the response stream, which allows one writer at a time.
/// Progress is advisory: when the caller reads slowly the oldest pending events are dropped, never the result.
/// </summary>
internal sealed class ProgressRelay
{
    private const int PendingEvents = 64;

    private readonly Channel<Proto.GroupingProgress> _pending = Channel.CreateBounded<Proto.GroupingProgress>(
        new BoundedChannelOptions(PendingEvents) { FullMode = BoundedChannelFullMode.DropOldest, SingleReader = true });

    private readonly Task _pump;

    public ProgressRelay(IServerStreamWriter<Proto.StreamGroupDocumentsResponse> responseStream, CancellationToken cancellationToken)
    {
        _pump = PumpAsync(responseStream, cancellationToken);
    }

    public void Post(GroupingProgress progress) => _pending.Writer.TryWrite(ResponseMapper.ToProto(progress));

    /// <summary>Texts embedded so far (GROUPING_STAGE_EMBEDDING).</summary>
    public void PostEmbedding(int done, int total) => _pending.Writer.TryWrite(EmbeddingStatistics.Progress(done, total));

    /// <summary>Writes what is still pending, then returns; the stream is free for the result afterwards.</summary>
    public async Task CompleteAsync()
    {
        _pending.Writer.TryComplete();
        try
        {
            await _pump;
        }
        catch (Exception exception) when (exception is OperationCanceledException or InvalidOperationException or IOException)
        {
            // The caller is gone or the call has ended; the run's own outcome (or the result write) reports it.
        }
    }

    private async Task PumpAsync(IServerStreamWriter<Proto.StreamGroupDocumentsResponse> responseStream, CancellationToken cancellationToken)
    {
        await foreach (Proto.GroupingProgress progress in _pending.Reader.ReadAllAsync(cancellationToken))
        {
            await responseStream.WriteAsync(new Proto.StreamGroupDocumentsResponse { Progress = progress }, cancellationToken);
        }
    }
}
