using System.Buffers;
using System.Diagnostics.CodeAnalysis;
using System.Runtime.CompilerServices;
using Google.Protobuf;
using Google.Protobuf.Reflection;

namespace TopicGroups.Server.Validation;

/// <summary>
/// Parses a streamed chunk without the protobuf parser's own array for its packed_embeddings: the field's bytes
/// go into an array borrowed from <see cref="ArrayPool{T}.Shared"/> and the rest of the message is parsed as
/// usual. The parser would allocate a fresh array per chunk, and above 85,000 bytes a large-object one, whose
/// first touch costs a page fault per 4 KiB; a long stream instead reuses a few pooled arrays. The chunk reader
/// of <see cref="ParseCheckedMethodProvider"/> gives a chunk's array back (<see cref="Release"/>) when the handler
/// asks for the next chunk: by then the validator has copied its rows into the batch's matrix.
/// </summary>
/// <remarks>Public, unlike most of the server, so that the server tests (which see only public types) can check the
/// wire walk on payloads cut at every boundary; it works on any message through its descriptor.</remarks>
public static class PooledPackedField
{
    /// <summary>Fields shorter than this are left to the parser: pooling pays only for large blocks.</summary>
    public const int MinimumPooledBytes = 16 * 1024;

    private const string FieldName = "packed_embeddings";

    private static readonly ConditionalWeakTable<object, byte[]> Leases = new();

    /// <summary>The message's top-level packed_embeddings field, or null when it has none.</summary>
    public static FieldDescriptor? FieldOf(MessageDescriptor descriptor) =>
        descriptor.FindFieldByName(FieldName) is { FieldType: FieldType.Bytes, IsRepeated: false } field ? field : null;

    /// <summary>
    /// Parses <paramref name="payload"/> with the field's bytes in a pooled array. False (nothing borrowed) when the
    /// field is absent, short, repeated in the payload or the payload is not plain top-level wire format: the
    /// caller then parses as usual, so a malformed message meets the parser's own checks and errors.
    /// </summary>
    /// <exception cref="InvalidProtocolBufferException">The fields around packed_embeddings are malformed (the array is returned first).</exception>
    public static bool TryParse(ReadOnlySequence<byte> payload, MessageDescriptor descriptor, FieldDescriptor field, [NotNullWhen(true)] out IMessage? message)
    {
        message = null;
        if (!TryLocate(payload, field.FieldNumber, out long tagStart, out long valueStart, out int length) || length < MinimumPooledBytes)
        {
            return false;
        }

        byte[] lease = ArrayPool<byte>.Shared.Rent(length);
        try
        {
            payload.Slice(valueStart, length).CopyTo(lease);
            // Fields may come in any order and each part holds whole fields, so parsing the part before and merging
            // the part after reads what parsing the whole would.
            message = descriptor.Parser.ParseFrom(payload.Slice(0, tagStart));
            message.MergeFrom(payload.Slice(valueStart + length));
        }
        catch
        {
            ArrayPool<byte>.Shared.Return(lease);
            throw;
        }

        field.Accessor.SetValue(message, UnsafeByteOperations.UnsafeWrap(lease.AsMemory(0, length)));
        Leases.Add(message, lease);
        return true;
    }

    /// <summary>
    /// Returns the array <paramref name="message"/> borrowed, if any, and empties its packed_embeddings so that a late
    /// reader sees no bytes rather than another chunk's. Does nothing for a message parsed the usual way.
    /// </summary>
    public static void Release(IMessage message)
    {
        if (!Leases.TryGetValue(message, out byte[]? lease))
        {
            return;
        }

        Leases.Remove(message);
        FieldOf(message.Descriptor)!.Accessor.SetValue(message, ByteString.Empty);
        ArrayPool<byte>.Shared.Return(lease);
    }

    /// <summary>
    /// Walks the top-level fields of <paramref name="payload"/> and finds the one length-delimited occurrence of field
    /// <paramref name="fieldNumber"/>: where its tag starts, where its bytes start and how many there are.
    /// </summary>
    private static bool TryLocate(ReadOnlySequence<byte> payload, int fieldNumber, out long tagStart, out long valueStart, out int length)
    {
        tagStart = valueStart = -1;
        length = 0;
        var reader = new SequenceReader<byte>(payload);
        while (!reader.End)
        {
            long start = reader.Consumed;
            if (!TryReadVarint(ref reader, out ulong tag) || tag >> 3 is 0 or > int.MaxValue)
            {
                return false;
            }

            bool isField = (int)(tag >> 3) == fieldNumber;
            switch ((WireFormat.WireType)(tag & 7))
            {
                case WireFormat.WireType.Varint when !isField:
                    if (!TryReadVarint(ref reader, out _))
                    {
                        return false;
                    }

                    break;
                case WireFormat.WireType.Fixed64 when !isField && reader.Remaining >= 8:
                    reader.Advance(8);
                    break;
                case WireFormat.WireType.Fixed32 when !isField && reader.Remaining >= 4:
                    reader.Advance(4);
                    break;
                case WireFormat.WireType.LengthDelimited:
                    if (!TryReadVarint(ref reader, out ulong size) || size > (ulong)reader.Remaining || size > int.MaxValue)
                    {
                        return false;
                    }

                    if (isField)
                    {
                        if (tagStart >= 0)
                        {
                            return false;   // the last occurrence would win; leave that rare case to the parser
                        }

                        (tagStart, valueStart, length) = (start, reader.Consumed, (int)size);
                    }

                    reader.Advance((long)size);
                    break;
                default:
                    return false;   // groups, a truncated value, or the field with another wire type
            }
        }

        return tagStart >= 0;
    }

    private static bool TryReadVarint(ref SequenceReader<byte> reader, out ulong value)
    {
        value = 0;
        for (int shift = 0; shift < 64; shift += 7)
        {
            if (!reader.TryRead(out byte next))
            {
                return false;
            }

            value |= (ulong)(next & 0x7F) << shift;
            if (next < 0x80)
            {
                return true;
            }
        }

        return false;
    }
}
