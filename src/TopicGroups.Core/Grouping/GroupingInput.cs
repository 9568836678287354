using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Grouping;

/// <summary>A validated batch: row i of Embeddings belongs to Ids[i] and Texts[i].</summary>
public sealed class GroupingInput
{
    public GroupingInput(IReadOnlyList<string> ids, IReadOnlyList<string> texts, EmbeddingMatrix embeddings, GroupingOptions options)
    {
        ArgumentNullException.ThrowIfNull(ids);
        ArgumentNullException.ThrowIfNull(texts);
        ArgumentNullException.ThrowIfNull(embeddings);
        ArgumentNullException.ThrowIfNull(options);
        if (ids.Count != embeddings.Rows || texts.Count != embeddings.Rows)
        {
            throw new ArgumentException(
                $"ids ({ids.Count}), texts ({texts.Count}) and embedding rows ({embeddings.Rows}) must have the same count.",
                nameof(embeddings));
        }

        Ids = ids;
        Texts = texts;
        Embeddings = embeddings;
        Options = options;
    }

    public IReadOnlyList<string> Ids { get; }

    public IReadOnlyList<string> Texts { get; }

    /// <summary>Raw embeddings; the pipeline normalises them in place (the one float32 copy).</summary>
    public EmbeddingMatrix Embeddings { get; }

    public GroupingOptions Options { get; }
}
