using System.Text;
using TopicGroups.Cli.Input;
using TopicGroups.Cli.Tests.TestSupport;

namespace TopicGroups.Cli.Tests.Input;

public sealed class JsonlDocumentReaderTests : IDisposable
{
    private readonly TempDirectory _directory = new();

    public void Dispose() => _directory.Dispose();

    [Fact]
    public void Read_InlineEmbeddings_DocumentsInFileOrderWithTheirLines()
    {
        string path = _directory.WriteText("docs.jsonl",
            "{\"id\": \"a\", \"text\": \"Refund please\", \"embedding\": [1, 0.5, -2e-3], \"channel\": \"email\"}\n"
            + "\n"
            + "{\"embedding\": [0, 1, 0], \"text\": \"Où est mon colis ?\", \"id\": \"b\"}\r\n"
            + "{\"id\": \"c\", \"text\": \"\", \"embedding\": [0.25, 0.25, 0.25], \"tags\": {\"x\": [1, 2]}}");

        JsonlDocuments read = JsonlDocumentReader.Read(path, readEmbeddings: true);

        Assert.Equal(["a", "b", "c"], read.Documents.Select(d => d.Id));
        Assert.Equal(["Refund please", "Où est mon colis ?", ""], read.Documents.Select(d => d.Text));
        Assert.Equal([1f, 0.5f, -2e-3f], read.Documents[0].Embedding);
        Assert.Equal([1, 3, 4], read.LineNumbers); // the blank line 2 is skipped, numbering is the file's
        Assert.Equal(3, read.Dimensions);
    }

    [Fact]
    public void Read_ByteOrderMarkAndNoEmbeddingsWanted_EmbeddingSkipped()
    {
        byte[] bom = [0xEF, 0xBB, 0xBF];
        string path = _directory.WriteBytes("bom.jsonl",
            [.. bom, .. Encoding.UTF8.GetBytes("{\"id\": \"a\", \"text\": \"x\", \"embedding\": [1, 2]}\n")]);

        JsonlDocuments read = JsonlDocumentReader.Read(path, readEmbeddings: false);

        Assert.Equal("a", Assert.Single(read.Documents).Id);
        Assert.Empty(read.Documents[0].Embedding);
    }

    [Fact]
    public void Read_LineLongerThanReadBuffer_ReadWhole()
    {
        // 20,000 values at about 20 characters each: a 400 KB line, several times the 64 KB read buffer.
        float[] values = Enumerable.Range(0, 20_000).Select(i => MathF.Sin(i) / 3).ToArray();
        string embedding = string.Join(", ", values.Select(v => v.ToString("R", System.Globalization.CultureInfo.InvariantCulture)));
        string path = _directory.WriteText("long.jsonl",
            $"{{\"id\": \"short\", \"text\": \"t\", \"embedding\": [{embedding}]}}\n{{\"id\": \"next\", \"text\": \"u\", \"embedding\": [{embedding}]}}\n");

        JsonlDocuments read = JsonlDocumentReader.Read(path, readEmbeddings: true);

        Assert.Equal(2, read.Documents.Count);
        Assert.Equal(values, read.Documents[1].Embedding);
    }

    [Theory]
    [InlineData("{\"text\": \"no id here\", \"embedding\": [1]}", "t.jsonl line 2: expected a JSON object with \"id\" (string)")]
    [InlineData("{\"id\": 17, \"text\": \"x\", \"embedding\": [1]}", "t.jsonl line 2: \"id\" must be a string, found a number")]
    [InlineData("{\"id\": \"\", \"text\": \"x\", \"embedding\": [1]}", "t.jsonl line 2: \"id\" is empty; give every document a unique, non-empty id")]
    [InlineData("{\"id\": \"b\", \"embedding\": [1]}", "t.jsonl line 2: expected a JSON object with \"text\" (string)")]
    [InlineData("{\"id\": \"b\", \"text\": null, \"embedding\": [1]}", "t.jsonl line 2: \"text\" must be a string, found null")]
    [InlineData("{\"id\": \"b\", \"text\": \"x\"}", "t.jsonl line 2: expected \"embedding\" (array of numbers) like line 1; give every line an embedding, or none and the service embeds the texts, or pass the vectors with --embeddings FILE.npy")]
    [InlineData("{\"id\": \"b\", \"text\": \"x\", \"embedding\": [1, \"2\"]}", "t.jsonl line 2: \"embedding\" item 1 must be a number, found a string")]
    [InlineData("{\"id\": \"b\", \"text\": \"x\", \"embedding\": \"1,2\"}", "t.jsonl line 2: \"embedding\" must be an array of numbers, found a string")]
    [InlineData("{\"id\": \"b\", \"text\": \"x\", \"embedding\": [1, 2]}", "t.jsonl line 2: \"embedding\" has 2 numbers but line 1 has 1; every document needs the same length")]
    [InlineData("{\"id\": \"b\", \"text\": \"x\", \"embedding\": [1e39]}", "t.jsonl line 2: \"embedding\" item 0 is outside the float32 range (about ±3.4e38)")]
    [InlineData("{\"id\": \"a\", \"text\": \"again\", \"embedding\": [1]}", "t.jsonl line 2: id \"a\" is already used on line 1; ids must be unique")]
    [InlineData("[\"b\", \"x\"]", "t.jsonl line 2: expected a JSON object with \"id\" (string) and \"text\" (string), found an array")]
    [InlineData("{\"id\": \"b\", \"text\": \"x\", \"embedding\": [1]} {}", "t.jsonl line 2: unexpected content after the JSON object; put one document per line")]
    public void Read_BadSecondLine_OneLineNamingFileLineAndField(string secondLine, string expected)
    {
        string path = _directory.WriteText("t.jsonl", "{\"id\": \"a\", \"text\": \"first\", \"embedding\": [0.5]}\n" + secondLine + "\n");

        var ex = Assert.Throws<InputException>(() => JsonlDocumentReader.Read(path, readEmbeddings: true));

        Assert.Equal(expected, ex.Message);
    }

    [Fact]
    public void Read_TextsOnlyFile_DocumentsWithoutEmbeddings()
    {
        string path = _directory.WriteText("texts.jsonl", "{\"id\": \"a\", \"text\": \"Refund please\"}\n\n{\"id\": \"b\", \"text\": \"Where is my parcel?\"}\n");

        JsonlDocuments read = JsonlDocumentReader.Read(path, readEmbeddings: true);

        Assert.Equal(["a", "b"], read.Documents.Select(d => d.Id));
        Assert.All(read.Documents, d => Assert.Empty(d.Embedding));
        Assert.Equal(0, read.Dimensions);
        Assert.Equal([1, 3], read.LineNumbers);
    }

    [Fact]
    public void Read_TextsOnlyThenAnEmbedding_ErrorNamesBothLines()
    {
        string path = _directory.WriteText("t.jsonl",
            "{\"id\": \"a\", \"text\": \"x\"}\n{\"id\": \"b\", \"text\": \"y\"}\n{\"id\": \"c\", \"text\": \"z\", \"embedding\": [1, 2]}\n");

        var ex = Assert.Throws<InputException>(() => JsonlDocumentReader.Read(path, readEmbeddings: true));

        Assert.Equal("t.jsonl line 3: has \"embedding\" but line 1 has none; give every line an embedding, or none and the service embeds the texts", ex.Message);
    }

    [Fact]
    public void Read_InvalidJson_NamesLineAndCharacter()
    {
        string path = _directory.WriteText("t.jsonl", "{\"id\": \"a\", \"text\": \"ok\"}\n{\"id\": \"b\", \"text\": \"unterminated}\n");

        var ex = Assert.Throws<InputException>(() => JsonlDocumentReader.Read(path, readEmbeddings: false));

        Assert.StartsWith("t.jsonl line 2: not valid JSON at character ", ex.Message);
        Assert.DoesNotContain("LineNumber", ex.Message);
        Assert.DoesNotContain('\n', ex.Message);
    }

    [Fact]
    public void Read_OnlyBlankLines_SaysNoDocuments()
    {
        string path = _directory.WriteText("empty.jsonl", "\n  \n\r\n");

        var ex = Assert.Throws<InputException>(() => JsonlDocumentReader.Read(path, readEmbeddings: false));

        Assert.Equal("empty.jsonl: no documents (the file has no non-blank lines)", ex.Message);
    }

    [Fact]
    public void Read_MissingFile_NamesFile()
    {
        string path = _directory.File("nowhere.jsonl");

        var ex = Assert.Throws<InputException>(() => JsonlDocumentReader.Read(path, readEmbeddings: false));

        Assert.Equal($"nowhere.jsonl: file not found (looked for {path})", ex.Message);
    }
}
