namespace TopicGroups.Client;

/// <summary>
/// A batch held as a matrix: row i of <see cref="Embeddings"/> (row-major, <see cref="Dimensions"/> values per
/// row) is the embedding of the document with id <see cref="Ids"/>[i] and text <see cref="Texts"/>[i]. The client
/// sends it without building a message per document; see <see cref="TopicGroupsClient.GroupEmbeddingsAsync"/>.
/// </summary>
public sealed class EmbeddingBatch
{
    /// <param name="ids">One id per row, unique, 1-256 characters.</param>
    /// <param name="texts">One text per row, or null to send no texts (groups then have no terms).</param>
    /// <param name="embeddings">Rows × dimensions values, row-major. Read when the batch is sent, not copied before.</param>
    /// <param name="dimensions">Values per row.</param>
    /// <exception cref="ArgumentException">The lengths do not agree.</exception>
    public EmbeddingBatch(IReadOnlyList<string> ids, IReadOnlyList<string>? texts, ReadOnlyMemory<float> embeddings, int dimensions)
    {
        ArgumentNullException.ThrowIfNull(ids);
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(dimensions);
        if ((long)ids.Count * dimensions != embeddings.Length)
        {
            throw new ArgumentException(
                $"embeddings has {embeddings.Length} values but {ids.Count} ids × {dimensions} dimensions = {(long)ids.Count * dimensions}.",
                nameof(embeddings));
        }

        if (texts is not null && texts.Count != ids.Count)
        {
            throw new ArgumentException($"texts has {texts.Count} entries but ids has {ids.Count}; give one text per id, or none.", nameof(texts));
        }

        Ids = ids;
        Texts = texts;
        Embeddings = embeddings;
        Dimensions = dimensions;
    }

    /// <summary>One id per row.</summary>
    public IReadOnlyList<string> Ids { get; }

    /// <summary>One text per row, or null.</summary>
    public IReadOnlyList<string>? Texts { get; }

    /// <summary>Rows × dimensions values, row-major.</summary>
    public ReadOnlyMemory<float> Embeddings { get; }

    /// <summary>Values per row.</summary>
    public int Dimensions { get; }

    /// <summary>Rows (documents).</summary>
    public int Count => Ids.Count;
}
