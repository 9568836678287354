namespace TopicGroups.Cli.Input;

/// <summary>
/// Splits a UTF-8 stream into lines ('\n' or "\r\n") without decoding it, so a JSON parser can read
/// each line's bytes directly. A leading byte-order mark is skipped. The memory handed out is only
/// valid until the next line is requested.
/// </summary>
internal static class LineSplitter
{
    public static IEnumerable<(int LineNumber, ReadOnlyMemory<byte> Line)> Lines(Stream stream)
    {
        byte[] buffer = new byte[1 << 16];
        int start = 0;
        int end = 0;
        int lineNumber = 0;
        bool first = true;
        while (true)
        {
            int newline = buffer.AsSpan(start, end - start).IndexOf((byte)'\n');
            if (newline < 0)
            {
                // Move the partial line to the front, grow if one line fills the buffer, and read more.
                if (start > 0)
                {
                    Buffer.BlockCopy(buffer, start, buffer, 0, end - start);
                    end -= start;
                    start = 0;
                }

                if (end == buffer.Length)
                {
                    Array.Resize(ref buffer, buffer.Length * 2);
                }

                int read = stream.Read(buffer, end, buffer.Length - end);
                if (read > 0)
                {
                    end += read;
                    if (first && end >= 3 && buffer[0] == 0xEF && buffer[1] == 0xBB && buffer[2] == 0xBF)
                    {
                        start = 3;
                    }

                    first = first && end < 3;
                    continue;
                }

                if (end > start)
                {
                    yield return (++lineNumber, TrimCarriageReturn(buffer.AsMemory(start, end - start)));
                }

                yield break;
            }

            yield return (++lineNumber, TrimCarriageReturn(buffer.AsMemory(start, newline)));
            start += newline + 1;
        }
    }

    private static ReadOnlyMemory<byte> TrimCarriageReturn(ReadOnlyMemory<byte> line) =>
        line.Length > 0 && line.Span[^1] == (byte)'\r' ? line[..^1] : line;
}
