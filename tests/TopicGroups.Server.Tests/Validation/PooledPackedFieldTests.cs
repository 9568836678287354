using System.Buffers;
using Google.Protobuf;
using Google.Protobuf.Reflection;
using TopicGroups.Protos.V1;
using TopicGroups.Server.Validation;
using Xunit;

namespace TopicGroups.Server.Tests.Validation;

/// <summary>
/// A streamed chunk parsed with its packed_embeddings in a pooled array reads exactly as the protobuf parser reads
/// it, however the transport cut the payload into segments; anything unusual is left to the parser.
/// </summary>
public sealed class PooledPackedFieldTests
{
    private const int Dimensions = 128;

    private static readonly MessageDescriptor Descriptor = StreamGroupDocumentsRequest.Descriptor;
    private static readonly FieldDescriptor PackedField = PooledPackedField.FieldOf(Descriptor)!;

    /// <summary>Chunk 0 of a packed stream: options and request id before the packed field, documents after it.</summary>
    private static StreamGroupDocumentsRequest Chunk(int documents)
    {
        var random = new Random(7);
        byte[] packed = new byte[documents * Dimensions * sizeof(float)];
        random.NextBytes(packed);
        var chunk = new StreamGroupDocumentsRequest
        {
            ChunkIndex = 0,
            Options = new GroupingOptions { GroupCount = 3, Seed = 11 },
            RequestId = "retry-key-1",
            DocumentCount = 900,
            EmbeddingDimensions = Dimensions,
            PackedEmbeddings = ByteString.CopyFrom(packed),
        };
        for (int i = 0; i < documents; i++)
        {
            chunk.Documents.Add(new Document { Id = $"ticket-{i}", Text = $"cabin {i} was cold" });
        }

        return chunk;
    }

    /// <summary>The bytes as a sequence of segments cut every <paramref name="segmentBytes"/> bytes, as Kestrel's blocks cut a message.</summary>
    private static ReadOnlySequence<byte> Segmented(byte[] bytes, int segmentBytes)
    {
        var first = new Segment(bytes.AsMemory(0, Math.Min(segmentBytes, bytes.Length)), 0);
        Segment last = first;
        for (int start = segmentBytes; start < bytes.Length; start += segmentBytes)
        {
            last = last.Append(bytes.AsMemory(start, Math.Min(segmentBytes, bytes.Length - start)));
        }

        return new ReadOnlySequence<byte>(first, 0, last, last.Memory.Length);
    }

    [Theory]
    [InlineData(1 << 20)]   // one segment
    [InlineData(4096)]      // Kestrel-sized blocks: the packed field spans many
    [InlineData(7)]         // tags and lengths cut mid-varint
    public void TryParse_LargePackedField_ReadsAsTheParserDoes(int segmentBytes)
    {
        StreamGroupDocumentsRequest sent = Chunk(documents: 40);   // 20 KiB of embeddings
        ReadOnlySequence<byte> payload = Segmented(sent.ToByteArray(), segmentBytes);

        Assert.True(PooledPackedField.TryParse(payload, Descriptor, PackedField, out IMessage? parsed));

        Assert.Equal(StreamGroupDocumentsRequest.Parser.ParseFrom(payload), parsed);
        Assert.Equal(sent, parsed);
        PooledPackedField.Release(parsed);
    }

    [Fact]
    public void TryParse_FieldsInAnyOrder_ReadsAsTheParserDoes()
    {
        // Writers may order fields as they like: packed_embeddings first, then the rest.
        StreamGroupDocumentsRequest sent = Chunk(documents: 40);
        var packedOnly = new StreamGroupDocumentsRequest { PackedEmbeddings = sent.PackedEmbeddings };
        var rest = sent.Clone();
        rest.PackedEmbeddings = ByteString.Empty;
        byte[] bytes = [.. packedOnly.ToByteArray(), .. rest.ToByteArray()];

        Assert.True(PooledPackedField.TryParse(new ReadOnlySequence<byte>(bytes), Descriptor, PackedField, out IMessage? parsed));

        Assert.Equal(sent, parsed);
        PooledPackedField.Release(parsed);
    }

    [Fact]
    public void TryParse_SmallPackedField_LeftToTheParser()
    {
        StreamGroupDocumentsRequest sent = Chunk(documents: 2);   // 1 KiB: below MinimumPooledBytes
        Assert.True(sent.PackedEmbeddings.Length < PooledPackedField.MinimumPooledBytes);

        Assert.False(PooledPackedField.TryParse(new ReadOnlySequence<byte>(sent.ToByteArray()), Descriptor, PackedField, out _));
    }

    [Fact]
    public void TryParse_PackedFieldTwice_LeftToTheParser()
    {
        // Protobuf keeps the last occurrence of a singular field; the walk leaves that rare case to the parser.
        StreamGroupDocumentsRequest sent = Chunk(documents: 40);
        var second = new StreamGroupDocumentsRequest { PackedEmbeddings = Chunk(documents: 41).PackedEmbeddings };
        byte[] bytes = [.. sent.ToByteArray(), .. second.ToByteArray()];

        Assert.False(PooledPackedField.TryParse(new ReadOnlySequence<byte>(bytes), Descriptor, PackedField, out _));
        Assert.Equal(second.PackedEmbeddings, StreamGroupDocumentsRequest.Parser.ParseFrom(bytes).PackedEmbeddings);
    }

    [Fact]
    public void TryParse_TruncatedPayload_LeftToTheParser()
    {
        byte[] bytes = Chunk(documents: 40).ToByteArray();
        var truncated = new ReadOnlySequence<byte>(bytes.AsMemory(0, bytes.Length - 100));

        Assert.False(PooledPackedField.TryParse(truncated, Descriptor, PackedField, out _));
        Assert.Throws<InvalidProtocolBufferException>(() => StreamGroupDocumentsRequest.Parser.ParseFrom(truncated));
    }

    [Fact]
    public void TryParse_MalformedFieldBesidePackedField_ThrowsAsTheParserDoes()
    {
        // A document id that is not UTF-8: the parser's own error, so the caller can name the field.
        StreamGroupDocumentsRequest sent = Chunk(documents: 40);
        sent.Documents[^1].Id = "QQQQ";
        byte[] bytes = sent.ToByteArray();
        int at = bytes.AsSpan().LastIndexOf("QQQQ"u8);
        bytes[at] = 0xFF;

        Assert.ThrowsAny<Exception>(() => StreamGroupDocumentsRequest.Parser.ParseFrom(bytes));
        Exception exception = Assert.ThrowsAny<Exception>(() =>
            PooledPackedField.TryParse(new ReadOnlySequence<byte>(bytes), Descriptor, PackedField, out _));
        Assert.True(exception is InvalidProtocolBufferException or System.Text.DecoderFallbackException, exception.GetType().Name);
    }

    [Fact]
    public void Release_EmptiesTheField_AndTwiceDoesNothing()
    {
        StreamGroupDocumentsRequest sent = Chunk(documents: 40);
        Assert.True(PooledPackedField.TryParse(new ReadOnlySequence<byte>(sent.ToByteArray()), Descriptor, PackedField, out IMessage? parsed));
        var chunk = (StreamGroupDocumentsRequest)parsed;

        PooledPackedField.Release(chunk);
        PooledPackedField.Release(chunk);

        Assert.True(chunk.PackedEmbeddings.IsEmpty);   // a late reader sees no bytes, not another chunk's
        Assert.Equal(sent.Documents, chunk.Documents);
    }

    [Fact]
    public void Release_MessageParsedTheUsualWay_LeavesItAlone()
    {
        StreamGroupDocumentsRequest sent = Chunk(documents: 40);

        PooledPackedField.Release(sent);

        Assert.Equal(40 * Dimensions * sizeof(float), sent.PackedEmbeddings.Length);
    }

    private sealed class Segment : ReadOnlySequenceSegment<byte>
    {
        public Segment(ReadOnlyMemory<byte> memory, long runningIndex)
        {
            Memory = memory;
            RunningIndex = runningIndex;
        }

        public Segment Append(ReadOnlyMemory<byte> memory)
        {
            var next = new Segment(memory, RunningIndex + Memory.Length);
            Next = next;
            return next;
        }
    }
}
