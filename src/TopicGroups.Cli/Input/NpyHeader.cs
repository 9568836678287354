using System.Globalization;

namespace TopicGroups.Cli.Input;

/// <summary>
/// The header dictionary of a .npy file, as defined by the NPY format specification
/// (NEP 1, "A simple file format for NumPy arrays", documented as numpy.lib.format):
/// a Python literal such as <c>{'descr': '&lt;f4', 'fortran_order': False, 'shape': (612, 384), }</c>.
/// </summary>
internal sealed record NpyHeader(string Descr, bool FortranOrder, long[] Shape)
{
    /// <summary>The six magic bytes every .npy file starts with: 0x93 then "NUMPY".</summary>
    public static ReadOnlySpan<byte> Magic => [0x93, (byte)'N', (byte)'U', (byte)'M', (byte)'P', (byte)'Y'];

    /// <summary>The spec pads the header so the data starts at a multiple of 64 bytes.</summary>
    public const int Alignment = 64;

    public string ShapeText => Shape.Length == 1
        ? $"({Shape[0]},)"
        : "(" + string.Join(", ", Shape.Select(s => s.ToString(CultureInfo.InvariantCulture))) + ")";

    /// <summary>
    /// Parses the dictionary literal. Keys may come in any order; strings may use either quote;
    /// the tuple may hold a trailing comma (numpy writes "(3,)" for one dimension).
    /// Throws <see cref="FormatException"/> with a reason.
    /// </summary>
    public static NpyHeader Parse(string text)
    {
        var scanner = new LiteralScanner(text);
        string? descr = null;
        bool? fortranOrder = null;
        long[]? shape = null;

        scanner.Expect('{');
        while (!scanner.TryConsume('}'))
        {
            string key = scanner.ReadString();
            scanner.Expect(':');
            switch (key)
            {
                case "descr":
                    descr = scanner.ReadString();
                    break;
                case "fortran_order":
                    fortranOrder = scanner.ReadBoolean();
                    break;
                case "shape":
                    shape = scanner.ReadIntegerTuple();
                    break;
                default:
                    throw new FormatException($"unknown header key '{key}'");
            }

            if (!scanner.TryConsume(','))
            {
                scanner.Expect('}');
                break;
            }
        }

        scanner.ExpectEnd();
        return new NpyHeader(
            descr ?? throw new FormatException("header has no 'descr'"),
            fortranOrder ?? throw new FormatException("header has no 'fortran_order'"),
            shape ?? throw new FormatException("header has no 'shape'"));
    }

    /// <summary>The dictionary text numpy itself writes for a C-ordered array (without padding).</summary>
    public string Format() =>
        $"{{'descr': '{Descr}', 'fortran_order': {(FortranOrder ? "True" : "False")}, 'shape': {ShapeText}, }}";

    private ref struct LiteralScanner(string text)
    {
        private readonly string _text = text;
        private int _position;

        public void Expect(char c)
        {
            if (!TryConsume(c))
            {
                throw new FormatException($"expected '{c}' at character {_position + 1} of the header");
            }
        }

        public bool TryConsume(char c)
        {
            SkipSpace();
            if (_position < _text.Length && _text[_position] == c)
            {
                _position++;
                return true;
            }

            return false;
        }

        public void ExpectEnd()
        {
            SkipSpace();
            if (_position != _text.Length)
            {
                throw new FormatException($"unexpected text after the header dictionary at character {_position + 1}");
            }
        }

        public string ReadString()
        {
            SkipSpace();
            if (_position >= _text.Length || (_text[_position] != '\'' && _text[_position] != '"'))
            {
                throw new FormatException($"expected a quoted string at character {_position + 1} of the header");
            }

            char quote = _text[_position];
            int end = _text.IndexOf(quote, _position + 1);
            if (end < 0)
            {
                throw new FormatException("unterminated string in the header");
            }

            string value = _text.Substring(_position + 1, end - _position - 1);
            _position = end + 1;
            return value;
        }

        public bool ReadBoolean()
        {
            SkipSpace();
            if (Matches("True"))
            {
                return true;
            }

            if (Matches("False"))
            {
                return false;
            }

            throw new FormatException($"expected True or False at character {_position + 1} of the header");
        }

        public long[] ReadIntegerTuple()
        {
            Expect('(');
            var values = new List<long>();
            while (!TryConsume(')'))
            {
                SkipSpace();
                int start = _position;
                while (_position < _text.Length && char.IsAsciiDigit(_text[_position]))
                {
                    _position++;
                }

                if (_position == start)
                {
                    throw new FormatException($"expected a whole number in 'shape' at character {_position + 1} of the header");
                }

                values.Add(long.Parse(_text.AsSpan(start, _position - start), CultureInfo.InvariantCulture));
                TryConsume('L'); // files written by Python 2 mark long integers
                if (!TryConsume(','))
                {
                    Expect(')');
                    break;
                }
            }

            return values.ToArray();
        }

        private bool Matches(string word)
        {
            if (string.CompareOrdinal(_text, _position, word, 0, word.Length) == 0)
            {
                _position += word.Length;
                return true;
            }

            return false;
        }

        private void SkipSpace()
        {
            while (_position < _text.Length && char.IsWhiteSpace(_text[_position]))
            {
                _position++;
            }
        }
    }
}
