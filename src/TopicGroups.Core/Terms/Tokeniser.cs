using System.Globalization;
using System.Text;

namespace TopicGroups.Core.Terms;

/// <summary>
/// Splits text into lower-cased word tokens. The rule, in full:
/// <list type="number">
/// <item>A token is a maximal run of Unicode letters (categories Lu, Ll, Lt, Lm, Lo), decimal digits (Nd)
/// and combining marks (Mn, Mc, Me, so accents written as separate code points and the vowel signs of
/// Indic scripts stay inside their word). Everything else (spaces, punctuation, symbols, emoji, other
/// numerals, unpaired surrogates) separates tokens, so "e-mail" gives "e" and "mail".</item>
/// <item>An apostrophe (' or U+2019) between letters is read with the letters after it: a possessive
/// "'s" is dropped and the word before it kept ("customer's" gives "customer"); any other suffix marks a
/// contraction ("don't", "I've", "couldn't"), a function word, and the whole token is dropped.</item>
/// <item>One to <see cref="MaximumCodePrefixLength"/> capital letters directly followed by '-' or '_' and a
/// digit are the prefix of an identifier (order "FF-48213", ticket "INC_2291"), not a word: dropped.</item>
/// <item>Each code point is lower-cased with the invariant culture's simple case mapping.</item>
/// <item>A token is dropped when it has fewer than two letters or digits (a single character), when it
/// has no letter at all (pure digits such as order numbers and years), or when it is longer than
/// <see cref="MaximumTokenLength"/> UTF-16 units (hashes, encoded blobs).</item>
/// </list>
/// Text is not Unicode-normalised, and scripts written without spaces between words give one token per run.
/// Stop words are removed later, by the vocabulary (<see cref="TermCorpus"/>).
/// </summary>
internal static class Tokeniser
{
    public const int MaximumTokenLength = 64;

    public const int MaximumCodePrefixLength = 3;

    /// <summary>Reads the tokens of <paramref name="text"/>; each is written lower-cased into <paramref name="buffer"/>.</summary>
    /// <param name="buffer">Scratch space of at least <see cref="MaximumTokenLength"/> characters, reused for every token.</param>
    public static TokenReader Read(ReadOnlySpan<char> text, Span<char> buffer)
    {
        if (buffer.Length < MaximumTokenLength)
        {
            throw new ArgumentException($"The buffer has {buffer.Length} characters; it needs {MaximumTokenLength}.", nameof(buffer));
        }

        return new TokenReader(text, buffer[..MaximumTokenLength]);
    }

    /// <summary>All tokens of <paramref name="text"/> as strings (allocates; for tests and small inputs).</summary>
    public static List<string> Tokenise(string text)
    {
        ArgumentNullException.ThrowIfNull(text);
        var tokens = new List<string>();
        Span<char> buffer = stackalloc char[MaximumTokenLength];
        TokenReader reader = Read(text, buffer);
        while (reader.MoveNext())
        {
            tokens.Add(reader.Current.ToString());
        }

        return tokens;
    }
}

/// <summary>Walks one text token by token without allocating; see <see cref="Tokeniser"/> for the rule.</summary>
internal ref struct TokenReader
{
    private readonly ReadOnlySpan<char> _text;
    private readonly Span<char> _buffer;
    private int _position;
    private int _length;

    internal TokenReader(ReadOnlySpan<char> text, Span<char> buffer)
    {
        _text = text;
        _buffer = buffer;
    }

    /// <summary>The current token, lower-cased; valid until the next call to <see cref="MoveNext"/>.</summary>
    public readonly ReadOnlySpan<char> Current => _buffer[.._length];

    public bool MoveNext()
    {
        ReadOnlySpan<char> text = _text;
        Span<char> buffer = _buffer;
        int position = _position;
        while (position < text.Length)
        {
            int written = 0;
            int lettersAndDigits = 0;
            bool hasLetter = false;
            bool tooLong = false;
            bool contraction = false;
            bool allCapitals = true;
            while (position < text.Length)
            {
                char c = text[position];
                if ((c == '\'' || c == '\u2019') && written > 0 && position + 1 < text.Length && char.IsAsciiLetter(text[position + 1]))
                {
                    int suffixStart = position + 1;
                    position = suffixStart;
                    while (position < text.Length && char.IsAsciiLetter(text[position]))
                    {
                        position++;
                    }

                    bool possessive = position - suffixStart == 1 && (text[suffixStart] | 0x20) == 's';
                    contraction = !possessive;
                    break;
                }

                if (c < 0x80)
                {
                    // ASCII fast path: letters, digits, nothing else.
                    bool isUpper = (uint)(c - 'A') <= 'Z' - 'A';
                    bool isLetter = isUpper || (uint)(c - 'a') <= 'z' - 'a';
                    if (!isLetter && (uint)(c - '0') > 9)
                    {
                        break;
                    }

                    position++;
                    lettersAndDigits++;
                    hasLetter |= isLetter;
                    allCapitals &= isUpper;
                    if (written < buffer.Length)
                    {
                        buffer[written++] = isUpper ? (char)(c | 0x20) : c;
                    }
                    else
                    {
                        tooLong = true;
                    }

                    continue;
                }

                Rune.DecodeFromUtf16(text[position..], out Rune rune, out int consumed);
                UnicodeCategory category = Rune.GetUnicodeCategory(rune);
                // UppercaseLetter (0) .. OtherLetter (4), then NonSpacingMark (5), SpacingCombiningMark (6),
                // EnclosingMark (7), DecimalDigitNumber (8): the enum orders exactly the categories a word holds.
                if (category > UnicodeCategory.DecimalDigitNumber)
                {
                    break;
                }

                position += consumed;
                allCapitals = false;
                bool letter = category <= UnicodeCategory.OtherLetter;
                if (letter || category == UnicodeCategory.DecimalDigitNumber)
                {
                    lettersAndDigits++;
                    hasLetter |= letter;
                }

                if (!tooLong && Rune.ToLowerInvariant(rune).TryEncodeToUtf16(buffer[written..], out int encoded))
                {
                    written += encoded;
                }
                else
                {
                    tooLong = true;
                }
            }

            bool codePrefix = allCapitals && lettersAndDigits <= Tokeniser.MaximumCodePrefixLength
                && position + 1 < text.Length && (text[position] == '-' || text[position] == '_') && char.IsAsciiDigit(text[position + 1]);
            if (lettersAndDigits >= 2 && hasLetter && !tooLong && !contraction && !codePrefix)
            {
                _position = position;
                _length = written;
                return true;
            }

            if (lettersAndDigits == 0 && written == 0 && position < text.Length)
            {
                // Not inside a word: step over one separator (a whole surrogate pair if it is one).
                position += char.IsHighSurrogate(text[position]) && position + 1 < text.Length && char.IsLowSurrogate(text[position + 1]) ? 2 : 1;
            }
        }

        _position = position;
        _length = 0;
        return false;
    }
}
