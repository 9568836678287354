using System.Buffers;
using System.Text;

namespace TopicGroups.Cli.Output;

/// <summary>Escaping for text placed in HTML element content and in double-quoted attribute values.</summary>
internal static class HtmlText
{
    private static readonly SearchValues<char> Special = SearchValues.Create(
        "&<>\"'\0\u0001\u0002\u0003\u0004\u0005\u0006\u0007\u0008\u000B\u000C\u000E\u000F\u0010\u0011\u0012\u0013\u0014\u0015\u0016\u0017\u0018\u0019\u001A\u001B\u001C\u001D\u001E\u001F\u007F");

    /// <summary>
    /// Replaces &amp; &lt; &gt; " ' with character references, and control characters other than tab and line breaks
    /// (not allowed in HTML) with a space. Everything else is kept as written: the file is UTF-8.
    /// </summary>
    public static string Encode(string? text)
    {
        if (string.IsNullOrEmpty(text))
        {
            return string.Empty;
        }

        int first = text.AsSpan().IndexOfAny(Special);
        if (first < 0)
        {
            return text;
        }

        var builder = new StringBuilder(text.Length + 16);
        builder.Append(text, 0, first);
        for (int i = first; i < text.Length; i++)
        {
            char c = text[i];
            switch (c)
            {
                case '&': builder.Append("&amp;"); break;
                case '<': builder.Append("&lt;"); break;
                case '>': builder.Append("&gt;"); break;
                case '"': builder.Append("&quot;"); break;
                case '\'': builder.Append("&#39;"); break;
                case '\t' or '\n' or '\r': builder.Append(c); break;
                case < ' ' or '\u007F': builder.Append(' '); break;
                default: builder.Append(c); break;
            }
        }

        return builder.ToString();
    }

    /// <summary>Shortens to at most <paramref name="length"/> characters at a word boundary, with "…" when cut; whitespace runs become one space.</summary>
    public static string Shorten(string text, int length) => TextReport.OneLine(text, length);
}
