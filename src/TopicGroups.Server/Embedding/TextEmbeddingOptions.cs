namespace TopicGroups.Server.Embedding;

/// <summary>Server-side embedding of texts sent without embeddings, from configuration section "TopicGroups:Embedding".</summary>
internal sealed class TextEmbeddingOptions
{
    public const string SectionName = "TopicGroups:Embedding";

    /// <summary>
    /// When true, a batch whose documents all come without embeddings is embedded by the server with the bundled
    /// MiniLM model (loaded on first use, about 90 MB); when false such a batch fails with FAILED_PRECONDITION.
    /// </summary>
    /// <value>The default is true.</value>
    public bool Enabled { get; set; } = true;

    /// <summary>Texts per model call (see <see cref="MiniLmEmbedder.DefaultBatchSize"/>).</summary>
    /// <value>The default is 8.</value>
    public int BatchSize { get; set; } = MiniLmEmbedder.DefaultBatchSize;

    /// <summary>Model calls run side by side; 0 means one per core.</summary>
    /// <value>The default is 0: every core.</value>
    public int Workers { get; set; }

    /// <summary>Throws at start-up when a setting is out of range, naming the key.</summary>
    public void Validate()
    {
        if (BatchSize < 1)
        {
            throw new InvalidOperationException($"Configuration {SectionName}:{nameof(BatchSize)} is {BatchSize}; it must be at least 1.");
        }

        if (Workers < 0)
        {
            throw new InvalidOperationException($"Configuration {SectionName}:{nameof(Workers)} is {Workers}; use 0 for one per core or a positive count.");
        }
    }

    internal int ResolvedWorkers => Workers == 0 ? Environment.ProcessorCount : Workers;
}
