using System.Buffers;
using System.Buffers.Binary;
using System.Runtime.InteropServices;
using Google.Protobuf;
using TopicGroups.Protos.V1;

namespace TopicGroups.Client;

/// <summary>
/// A batch's rows as the packed form sends them: each document without its embedding, and the embeddings of
/// consecutive rows as float32 little-endian bytes, row-major (packed_embeddings).
/// </summary>
internal abstract class PackingSource
{
    public abstract int Count { get; }

    public abstract int Dimensions { get; }

    /// <summary>Encoded size of row <paramref name="index"/>'s Document without its embedding.</summary>
    public abstract int BareSize(int index);

    /// <summary>Row <paramref name="index"/>'s document id.</summary>
    public abstract string Id(int index);

    /// <summary>Row <paramref name="index"/>'s Document without its embedding (id and text).</summary>
    public abstract Document Bare(int index);

    /// <summary>Writes rows [start, start + count) into <paramref name="destination"/> as float32 little-endian.</summary>
    public abstract void CopyRows(int start, int count, Span<byte> destination);

    /// <summary>Documents that carry their own embeddings, all of the same length.</summary>
    public static PackingSource Of(IReadOnlyList<Document> documents, int dimensions) => new DocumentRows(documents, dimensions);

    public static PackingSource Of(EmbeddingBatch batch) => new MatrixRows(batch);

    protected static void WriteLittleEndian(ReadOnlySpan<float> values, Span<byte> destination)
    {
        if (BitConverter.IsLittleEndian)
        {
            MemoryMarshal.AsBytes(values).CopyTo(destination);
            return;
        }

        for (int i = 0; i < values.Length; i++)
        {
            BinaryPrimitives.WriteSingleLittleEndian(destination[(i * sizeof(float))..], values[i]);
        }
    }

    private sealed class DocumentRows(IReadOnlyList<Document> documents, int dimensions) : PackingSource
    {
        // Document.embedding as a packed repeated float: tag, length prefix, 4 bytes per value.
        private readonly int _embeddingFieldSize =
            1 + CodedOutputStream.ComputeLengthSize(dimensions * sizeof(float)) + dimensions * sizeof(float);

        public override int Count => documents.Count;

        public override int Dimensions => dimensions;

        public override int BareSize(int index) => documents[index].CalculateSize() - _embeddingFieldSize;

        public override string Id(int index) => documents[index].Id;

        // Document has id, text and embedding (a test checks that no field was added); the first two are shared, not copied.
        public override Document Bare(int index) => new() { Id = documents[index].Id, Text = documents[index].Text };

        public override void CopyRows(int start, int count, Span<byte> destination)
        {
            int rowBytes = dimensions * sizeof(float);
            for (int i = 0; i < count; i++)
            {
                WriteLittleEndian(UnsafeCollectionOperations.AsSpan(documents[start + i].Embedding), destination.Slice(i * rowBytes, rowBytes));
            }
        }
    }

    private sealed class MatrixRows(EmbeddingBatch batch) : PackingSource
    {
        public override int Count => batch.Count;

        public override int Dimensions => batch.Dimensions;

        public override int BareSize(int index)
        {
            string text = batch.Texts?[index] ?? string.Empty;
            string id = batch.Ids[index] ?? throw new ArgumentException($"ids[{index}] is null.", nameof(batch));
            return (id.Length > 0 ? 1 + CodedOutputStream.ComputeStringSize(id) : 0)
                + (text.Length > 0 ? 1 + CodedOutputStream.ComputeStringSize(text) : 0);
        }

        public override string Id(int index) => batch.Ids[index];

        public override Document Bare(int index) => new() { Id = batch.Ids[index], Text = batch.Texts?[index] ?? string.Empty };

        public override void CopyRows(int start, int count, Span<byte> destination) =>
            WriteLittleEndian(batch.Embeddings.Span.Slice(start * batch.Dimensions, count * batch.Dimensions), destination);
    }
}

/// <summary>Builds the requests of the packed form: one unary message, or chunks made as they are sent.</summary>
internal static class PackedEmbeddings
{
    // Bytes a document adds to its repeated field beyond its own size: a tag and a length prefix of at most 5 bytes.
    private const int FieldOverheadBytes = 6;

    // chunk_index, embedding_dimensions, document_count (tag + varint each) and the tag and length of packed_embeddings.
    private const int ChunkFieldsBytes = 4 * 6;

    /// <summary>
    /// The dimension when every document has an embedding and all have the same length (the packed form can carry
    /// them); 0 otherwise: such batches go per document, so the server names the odd one out.
    /// </summary>
    public static int CommonDimensions(IReadOnlyList<Document> documents)
    {
        if (documents.Count == 0)
        {
            return 0;
        }

        int dimensions = (documents[0] ?? throw new ArgumentException("documents[0] is null.", nameof(documents))).Embedding.Count;
        for (int i = 1; i < documents.Count && dimensions > 0; i++)
        {
            Document document = documents[i] ?? throw new ArgumentException($"documents[{i}] is null.", nameof(documents));
            if (document.Embedding.Count != dimensions)
            {
                return 0;
            }
        }

        return dimensions;
    }

    /// <summary>Encoded size of the whole batch in the packed form, to choose between one message and a stream.</summary>
    public static long EncodedSize(PackingSource source)
    {
        long total = (long)source.Count * (FieldOverheadBytes + source.Dimensions * sizeof(float)) + ChunkFieldsBytes;
        for (int i = 0; i < source.Count; i++)
        {
            total += source.BareSize(i);
        }

        return total;
    }

    public static GroupDocumentsRequest Unary(PackingSource source, GroupingOptions options)
    {
        int rowBytes = source.Dimensions * sizeof(float);
        byte[] packed = new byte[checked(source.Count * rowBytes)];
        source.CopyRows(0, source.Count, packed);
        var request = new GroupDocumentsRequest
        {
            Options = options,
            EmbeddingDimensions = source.Dimensions,
            PackedEmbeddings = UnsafeByteOperations.UnsafeWrap(packed),
        };
        request.Documents.Capacity = source.Count;
        for (int i = 0; i < source.Count; i++)
        {
            request.Documents.Add(source.Bare(i));
        }

        return request;
    }

    /// <summary>
    /// Chunks of about <paramref name="chunkSizeBytes"/>, made one at a time as the caller asks for them. Their
    /// packed bytes live in one pooled buffer that the next chunk reuses, so the caller must have written (serialised)
    /// a chunk before asking for the next, as a stream does. Chunk 0 carries the options, the request id and the batch's
    /// document count.
    /// </summary>
    public static IEnumerable<StreamGroupDocumentsRequest> Chunks(PackingSource source, string requestId, GroupingOptions options, int chunkSizeBytes)
    {
        int rowBytes = source.Dimensions * sizeof(float);
        byte[]? buffer = null;
        try
        {
            int start = 0;
            int chunkIndex = 0;
            do
            {
                long bytes = ChunkFieldsBytes + (chunkIndex == 0 ? options.CalculateSize() + FieldOverheadBytes + requestId.Length + FieldOverheadBytes : 0);
                int end = start;
                while (end < source.Count)
                {
                    long rowSize = source.BareSize(end) + FieldOverheadBytes + rowBytes;
                    if (end > start && bytes + rowSize > chunkSizeBytes)
                    {
                        break;   // a single document larger than a chunk still travels, alone
                    }

                    bytes += rowSize;
                    end++;
                }

                int count = end - start;
                int length = checked(count * rowBytes);
                if (buffer is null || buffer.Length < length)
                {
                    if (buffer is not null)
                    {
                        ArrayPool<byte>.Shared.Return(buffer);
                    }

                    buffer = ArrayPool<byte>.Shared.Rent(length);
                }

                source.CopyRows(start, count, buffer);
                var chunk = new StreamGroupDocumentsRequest
                {
                    ChunkIndex = chunkIndex,
                    EmbeddingDimensions = source.Dimensions,
                    PackedEmbeddings = UnsafeByteOperations.UnsafeWrap(buffer.AsMemory(0, length)),
                };
                if (chunkIndex == 0)
                {
                    chunk.Options = options;
                    chunk.RequestId = requestId;
                    chunk.DocumentCount = source.Count;
                }

                chunk.Documents.Capacity = count;
                for (int i = start; i < end; i++)
                {
                    chunk.Documents.Add(source.Bare(i));
                }

                yield return chunk;
                start = end;
                chunkIndex++;
            }
            while (start < source.Count);
        }
        finally
        {
            if (buffer is not null)
            {
                ArrayPool<byte>.Shared.Return(buffer);
            }
        }
    }
}
