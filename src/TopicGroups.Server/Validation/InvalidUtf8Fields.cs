using System.Buffers;
using System.Text.Unicode;
using Google.Protobuf;
using Google.Protobuf.Reflection;

namespace TopicGroups.Server.Validation;

/// <summary>One step of a field path: a field's proto name, and the element's position when the field is repeated.</summary>
internal readonly record struct FieldStep(string Name, int Index)
{
    public const int Singular = -1;

    public override string ToString() => Index == Singular ? Name : $"{Name}[{Index}]";
}

/// <summary>A string field whose bytes are not UTF-8: where it is, and the first byte that breaks the encoding.</summary>
internal sealed record InvalidUtf8Field(IReadOnlyList<FieldStep> Path, int BadByteOffset, byte BadByte, int Length)
{
    public string FieldPath => string.Join('.', Path);
}

/// <summary>
/// Finds the string fields of a serialised message that are not UTF-8, by walking the protobuf wire format with the
/// message's descriptor. Used only after the protobuf parser has refused a request (it rejects invalid UTF-8 in proto3
/// strings without saying where), so the normal path never pays for it.
/// </summary>
internal static class InvalidUtf8Fields
{
    // The protobuf parser's own default recursion limit; deeper nesting is not walked.
    private const int MaxDepth = 100;

    /// <summary>
    /// The string fields of <paramref name="message"/> that are not UTF-8, in wire order, at most
    /// <paramref name="limit"/>. Stops quietly at the first malformed byte it cannot step over.
    /// </summary>
    public static List<InvalidUtf8Field> Find(MessageDescriptor descriptor, ReadOnlySequence<byte> message, int limit)
    {
        var found = new List<InvalidUtf8Field>();
        byte[] bytes = message.ToArray();
        Walk(bytes, descriptor, [], found, limit, depth: 0);
        return found;
    }

    /// <summary>Returns false when the bytes are not a well-formed message (the walk stops there).</summary>
    private static bool Walk(ReadOnlySpan<byte> message, MessageDescriptor descriptor, List<FieldStep> path,
        List<InvalidUtf8Field> found, int limit, int depth)
    {
        // Elements of a repeated field are numbered in the order they arrive, which is the parser's order too.
        Dictionary<int, int>? seen = null;
        int position = 0;
        while (position < message.Length && found.Count < limit)
        {
            if (!TryReadVarint(message, ref position, out ulong tag))
            {
                return false;
            }

            ulong fieldNumber = tag >> 3;
            switch ((WireFormat.WireType)(tag & 7))
            {
                case WireFormat.WireType.Varint:
                    if (!TryReadVarint(message, ref position, out _))
                    {
                        return false;
                    }

                    break;
                case WireFormat.WireType.Fixed64:
                    position += 8;
                    break;
                case WireFormat.WireType.Fixed32:
                    position += 4;
                    break;
                case WireFormat.WireType.LengthDelimited:
                    if (!TryReadVarint(message, ref position, out ulong length) || length > (ulong)(message.Length - position))
                    {
                        return false;
                    }

                    ReadOnlySpan<byte> payload = message.Slice(position, (int)length);
                    position += (int)length;
                    FieldDescriptor? field = fieldNumber <= int.MaxValue ? descriptor.FindFieldByNumber((int)fieldNumber) : null;
                    if (field is null || (field.FieldType != FieldType.String && field.FieldType != FieldType.Message))
                    {
                        break;   // unknown fields, bytes, packed numbers: nothing to check
                    }

                    int index = FieldStep.Singular;
                    if (field.IsRepeated)
                    {
                        seen ??= [];
                        seen.TryGetValue(field.FieldNumber, out index);
                        seen[field.FieldNumber] = index + 1;
                    }

                    path.Add(new FieldStep(field.Name, index));
                    bool wellFormed = true;
                    if (field.FieldType == FieldType.String)
                    {
                        CheckString(payload, path, found);
                    }
                    else if (depth + 1 < MaxDepth)
                    {
                        wellFormed = Walk(payload, field.MessageType, path, found, limit, depth + 1);
                    }

                    path.RemoveAt(path.Count - 1);
                    if (!wellFormed)
                    {
                        return false;
                    }

                    break;
                default:
                    return false;   // groups (proto2 only) and invalid wire types
            }
        }

        return position <= message.Length;
    }

    private static void CheckString(ReadOnlySpan<byte> text, List<FieldStep> path, List<InvalidUtf8Field> found)
    {
        if (Utf8.IsValid(text))
        {
            return;
        }

        // Failure path only: decode once more to find where the encoding breaks.
        char[] scratch = new char[text.Length];
        Utf8.ToUtf16(text, scratch, out int validBytes, out _, replaceInvalidSequences: false);
        found.Add(new InvalidUtf8Field([.. path], validBytes, text[validBytes], text.Length));
    }

    private static bool TryReadVarint(ReadOnlySpan<byte> bytes, ref int position, out ulong value)
    {
        value = 0;
        for (int shift = 0; shift < 64 && position < bytes.Length; shift += 7)
        {
            byte current = bytes[position++];
            value |= (ulong)(current & 0x7F) << shift;
            if ((current & 0x80) == 0)
            {
                return true;
            }
        }

        return false;
    }
}
