using TopicGroups.Core.Vectors;

namespace TopicGroups.Server.Embedding;

/// <summary>
/// A texts-only batch between validation and grouping: the texts, and the batch's matrix (allocated, still
/// zeros) that the model fills in place, so the vectors exist once. Runs on the grouping's own thread.
/// </summary>
internal sealed class TextsToEmbed
{
    /// <summary>Progress is forwarded at most this many times per batch (plus the last step), however many batches run.</summary>
    private const int ProgressSteps = 200;

    private readonly IReadOnlyList<string> _texts;
    private readonly EmbeddingMatrix _destination;
    private readonly TextEmbedding _embedding;

    public TextsToEmbed(IReadOnlyList<string> texts, EmbeddingMatrix destination, TextEmbedding embedding)
    {
        ArgumentNullException.ThrowIfNull(texts);
        ArgumentNullException.ThrowIfNull(destination);
        ArgumentNullException.ThrowIfNull(embedding);
        if (destination.Rows != texts.Count || destination.Dimensions != MiniLmEmbedder.Dimensions)
        {
            throw new ArgumentException(
                $"destination is {destination.Rows} × {destination.Dimensions}; {texts.Count} texts need {texts.Count} × {MiniLmEmbedder.Dimensions}.",
                nameof(destination));
        }

        _texts = texts;
        _destination = destination;
        _embedding = embedding;
    }

    public int Count => _texts.Count;

    /// <summary>Set once <see cref="Embed"/> has finished.</summary>
    public EmbeddingRun? Run { get; private set; }

    /// <summary>Fills the matrix; <paramref name="progress"/>(done, total) is called from worker threads, in order of done.</summary>
    public EmbeddingRun Embed(Action<int, int>? progress, CancellationToken cancellationToken)
    {
        Run = _embedding.Embed(_texts, _destination.Values, progress is null ? null : new ThrottledProgress(progress, _texts.Count), cancellationToken);
        return Run;
    }

    private sealed class ThrottledProgress(Action<int, int> target, int total) : IProgress<(int Done, int Total)>
    {
        private readonly int _step = Math.Max(1, total / ProgressSteps);
        private readonly Lock _lock = new();
        private int _lastReported;

        public void Report((int Done, int Total) value)
        {
            lock (_lock)
            {
                if (value.Done <= _lastReported || (value.Done - _lastReported < _step && value.Done < value.Total))
                {
                    return;
                }

                _lastReported = value.Done;
                target(value.Done, value.Total);
            }
        }
    }
}
