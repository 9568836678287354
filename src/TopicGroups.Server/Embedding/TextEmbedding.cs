using System.Diagnostics;
using Microsoft.Extensions.Options;

namespace TopicGroups.Server.Embedding;

/// <summary>What one embedding stage did: which model, how long it took and how many texts were cut to the window.</summary>
internal sealed record EmbeddingRun(string Model, TimeSpan Elapsed, int DocumentCount, int TruncatedTextCount);

/// <summary>
/// The server's text embedding (configuration section TopicGroups:Embedding): owns the one MiniLM model,
/// loaded on the first batch that needs it and shared by every call after that.
/// </summary>
internal sealed class TextEmbedding : IDisposable
{
    private readonly TextEmbeddingOptions _options;
    private readonly Lazy<MiniLmEmbedder> _embedder = new(() => new MiniLmEmbedder(), LazyThreadSafetyMode.ExecutionAndPublication);

    public TextEmbedding(IOptions<TextEmbeddingOptions> options)
    {
        _options = options.Value;
    }

    public bool Enabled => _options.Enabled;

    /// <summary>
    /// Embeds <paramref name="texts"/> into <paramref name="destination"/> (texts.Count × 384, row-major).
    /// <paramref name="progress"/> gets (done, total) now and then, from worker threads.
    /// </summary>
    /// <exception cref="OperationCanceledException">The token fired; the destination is then partly filled.</exception>
    public EmbeddingRun Embed(
        IReadOnlyList<string> texts,
        float[] destination,
        IProgress<(int Done, int Total)>? progress,
        CancellationToken cancellationToken)
    {
        if (!Enabled)
        {
            throw new InvalidOperationException($"Text embedding is disabled ({TextEmbeddingOptions.SectionName}:Enabled is false).");
        }

        var stopwatch = Stopwatch.StartNew();
        int truncated = _embedder.Value.Embed(texts, destination, _options.BatchSize, _options.ResolvedWorkers, progress, cancellationToken);
        return new EmbeddingRun(MiniLmEmbedder.ModelDescription, stopwatch.Elapsed, texts.Count, truncated);
    }

    public void Dispose()
    {
        if (_embedder.IsValueCreated)
        {
            _embedder.Value.Dispose();
        }
    }
}
