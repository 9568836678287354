using TopicGroups.Core.Terms;

namespace TopicGroups.Core.Tests.Terms;

public sealed class TokeniserTests
{
    [Theory]
    [InlineData("Hello, World!", new[] { "hello", "world" })]
    [InlineData("brakes...squeak;again?!", new[] { "brakes", "squeak", "again" })]
    [InlineData("e-mail rider@example.test", new[] { "mail", "rider", "example", "test" })]
    [InlineData("great\U0001F44Djob", new[] { "great", "job" })]
    [InlineData("tab\tnew\nline\r\nend", new[] { "tab", "new", "line", "end" })]
    public void Tokenise_Punctuation_SplitsAtEveryNonWordCharacter(string text, string[] expected)
    {
        Assert.Equal(expected, Tokeniser.Tokenise(text));
    }

    [Theory]
    // "it's" reads as a possessive: the stem "it" is kept (and later dropped as a stop word).
    [InlineData("I don't think it's the courier's fault", new[] { "think", "it", "the", "courier", "fault" })]
    [InlineData("couldn\u2019t open the driver\u2019s app", new[] { "open", "the", "driver", "app" })]
    [InlineData("it arrived at 5 o'clock", new[] { "it", "arrived", "at" })]
    [InlineData("quote 'fresh' box", new[] { "quote", "fresh", "box" })]
    public void Tokenise_Apostrophes_PossessiveKeepsStemContractionDropped(string text, string[] expected)
    {
        Assert.Equal(expected, Tokeniser.Tokenise(text));
    }

    [Theory]
    [InlineData("order FF-48213 late", new[] { "order", "late" })]
    [InlineData("see INC_2291 and ABCD-12", new[] { "see", "and", "abcd" })]
    [InlineData("covid-19 and Ff-48213 and FF-X", new[] { "covid", "and", "ff", "and", "ff" })]
    public void Tokenise_ShortCapitalCodeBeforeDigits_DroppedAsIdentifier(string text, string[] expected)
    {
        Assert.Equal(expected, Tokeniser.Tokenise(text));
    }

    [Theory]
    [InlineData("LOUD Quiet mIxEd", new[] { "loud", "quiet", "mixed" })]
    [InlineData("ÉCOLE École école", new[] { "école", "école", "école" })]
    [InlineData("ΣΟΦΙΑ", new[] { "σοφια" })]          // simple case mapping: no final-sigma form
    [InlineData("Привет МИР", new[] { "привет", "мир" })]
    public void Tokenise_MixedCase_LowerCasesInvariantly(string text, string[] expected)
    {
        Assert.Equal(expected, Tokeniser.Tokenise(text));
    }

    [Theory]
    [InlineData("Grüße aus München", new[] { "grüße", "aus", "münchen" })]
    [InlineData("नमस्ते दुनिया", new[] { "नमस्ते", "दुनिया" })]   // virama and vowel signs (Mn) stay inside the word
    [InlineData("cafe\u0301 ok", new[] { "cafe\u0301", "ok" })]     // decomposed accent stays on its word
    [InlineData("𝐀𝐁 word", new[] { "𝐀𝐁", "word" })]                 // letters outside the BMP (surrogate pairs); no lower case exists
    [InlineData("ab\uD800cd", new[] { "ab", "cd" })]                // an unpaired surrogate separates
    public void Tokenise_UnicodeScripts_KeepsLettersAndMarksTogether(string text, string[] expected)
    {
        Assert.Equal(expected, Tokeniser.Tokenise(text));
    }

    [Theory]
    [InlineData("Order 12345 arrived in 2024", new[] { "order", "arrived", "in" })]
    [InlineData("v2 4k 3d 42 007", new[] { "v2", "4k", "3d" })]
    [InlineData("٢٠٢٤ عام", new[] { "عام" })]                           // Arabic-Indic digits are digits too
    [InlineData("½ ² ⅷ", new string[0])]                               // other numerals separate
    public void Tokenise_Digits_DropsPureDigitTokensKeepsMixed(string text, string[] expected)
    {
        Assert.Equal(expected, Tokeniser.Tokenise(text));
    }

    [Theory]
    [InlineData("a b c I x ok", new[] { "ok" })]
    [InlineData("中 文字", new[] { "文字" })]
    [InlineData("", new string[0])]
    [InlineData("  ,.;  ", new string[0])]
    public void Tokenise_SingleCharacters_Dropped(string text, string[] expected)
    {
        Assert.Equal(expected, Tokeniser.Tokenise(text));
    }

    [Fact]
    public void Tokenise_TokenAtLengthLimit_KeptOneLongerDropped()
    {
        string atLimit = new('q', Tokeniser.MaximumTokenLength);
        string tooLong = new('z', Tokeniser.MaximumTokenLength + 1);

        Assert.Equal([atLimit, "tail"], Tokeniser.Tokenise($"{atLimit} {tooLong} tail"));
    }

    [Fact]
    public void Read_BufferTooSmall_ThrowsNamingBuffer()
    {
        var exception = Assert.Throws<ArgumentException>(() => Tokeniser.Read("text", new char[8]));
        Assert.Equal("buffer", exception.ParamName);
    }
}
