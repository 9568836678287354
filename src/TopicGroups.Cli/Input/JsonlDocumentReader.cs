using System.Text.Json;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Input;

/// <summary>
/// Reads documents from JSON Lines: one JSON object per line with "id" (string, unique),
/// "text" (string) and, when embeddings come from the same file, "embedding" (array of numbers,
/// the same length on every line). Either every line has "embedding" or none has: a file of texts
/// alone is embedded by the service. Other fields are ignored; blank lines are skipped.
/// Every problem is an <see cref="InputException"/> naming the file and line.
/// </summary>
internal static class JsonlDocumentReader
{
    /// <param name="path">The JSONL file.</param>
    /// <param name="readEmbeddings">
    /// True: "embedding" is read, and must be on every line or on none (texts only). False: "embedding" is skipped if present.
    /// </param>
    public static JsonlDocuments Read(string path, bool readEmbeddings)
    {
        using FileStream stream = InputFiles.OpenRead(path);
        return Read(stream, Path.GetFileName(path), readEmbeddings);
    }

    public static JsonlDocuments Read(Stream stream, string fileName, bool readEmbeddings)
    {
        var documents = new List<Document>();
        var lineNumbers = new List<int>();
        var lineOfId = new Dictionary<string, int>(StringComparer.Ordinal);
        int dimensions = 0;
        int firstEmbeddingLine = 0;
        int firstTextOnlyLine = 0;

        foreach ((int lineNumber, ReadOnlyMemory<byte> line) in LineSplitter.Lines(stream))
        {
            if (IsBlank(line.Span))
            {
                continue;
            }

            Document document = ParseLine(line.Span, fileName, lineNumber, readEmbeddings, expectedDimensions: dimensions);
            if (lineOfId.TryGetValue(document.Id, out int earlierLine))
            {
                throw new InputException(
                    $"{fileName} line {lineNumber}: id \"{Shorten(document.Id)}\" is already used on line {earlierLine}; ids must be unique");
            }

            lineOfId.Add(document.Id, lineNumber);
            if (readEmbeddings && document.Embedding.Count == 0)
            {
                if (dimensions > 0)
                {
                    throw new InputException(
                        $"{fileName} line {lineNumber}: expected \"embedding\" (array of numbers) like line {firstEmbeddingLine}; give every line "
                        + "an embedding, or none and the service embeds the texts, or pass the vectors with --embeddings FILE.npy");
                }

                firstTextOnlyLine = firstTextOnlyLine == 0 ? lineNumber : firstTextOnlyLine;
            }
            else if (readEmbeddings)
            {
                if (firstTextOnlyLine > 0)
                {
                    throw new InputException(
                        $"{fileName} line {lineNumber}: has \"embedding\" but line {firstTextOnlyLine} has none; give every line an embedding, "
                        + "or none and the service embeds the texts");
                }

                if (dimensions == 0)
                {
                    dimensions = document.Embedding.Count;
                    firstEmbeddingLine = lineNumber;
                }
                else if (document.Embedding.Count != dimensions)
                {
                    throw new InputException(
                        $"{fileName} line {lineNumber}: \"embedding\" has {document.Embedding.Count} numbers but line {firstEmbeddingLine} has {dimensions}; every document needs the same length");
                }
            }

            documents.Add(document);
            lineNumbers.Add(lineNumber);
        }

        if (documents.Count == 0)
        {
            throw new InputException($"{fileName}: no documents (the file has no non-blank lines)");
        }

        return new JsonlDocuments(fileName, documents, lineNumbers, dimensions);
    }

    private static Document ParseLine(ReadOnlySpan<byte> line, string fileName, int lineNumber, bool readEmbeddings, int expectedDimensions)
    {
        string where = $"{fileName} line {lineNumber}";
        var reader = new Utf8JsonReader(line, new JsonReaderOptions { CommentHandling = JsonCommentHandling.Disallow, AllowMultipleValues = true });
        string? id = null;
        string? text = null;
        Document document = new();
        try
        {
            if (!reader.Read() || reader.TokenType != JsonTokenType.StartObject)
            {
                throw new InputException($"{where}: expected a JSON object with \"id\" (string) and \"text\" (string), found {Describe(reader.TokenType)}");
            }

            while (reader.Read() && reader.TokenType == JsonTokenType.PropertyName)
            {
                if (reader.ValueTextEquals("id"u8))
                {
                    id = ReadString(ref reader, where, "id");
                }
                else if (reader.ValueTextEquals("text"u8))
                {
                    text = ReadString(ref reader, where, "text");
                }
                else if (readEmbeddings && reader.ValueTextEquals("embedding"u8))
                {
                    document.Embedding.Clear();
                    document.Embedding.Capacity = Math.Max(document.Embedding.Capacity, expectedDimensions); // one allocation once the length is known
                    ReadEmbedding(ref reader, where, document);
                }
                else
                {
                    reader.Read();
                    reader.Skip();
                }
            }

            if (reader.Read())
            {
                throw new InputException($"{where}: unexpected content after the JSON object; put one document per line");
            }
        }
        catch (JsonException ex)
        {
            throw new InputException($"{where}: not valid JSON at character {ex.BytePositionInLine + 1}: {JsonReason(ex)}");
        }

        if (id is null)
        {
            throw new InputException($"{where}: expected a JSON object with \"id\" (string)");
        }

        if (id.Length == 0)
        {
            throw new InputException($"{where}: \"id\" is empty; give every document a unique, non-empty id");
        }

        if (text is null)
        {
            throw new InputException($"{where}: expected a JSON object with \"text\" (string)");
        }

        document.Id = id;
        document.Text = text;
        return document;
    }

    private static string ReadString(ref Utf8JsonReader reader, string where, string field)
    {
        reader.Read();
        if (reader.TokenType != JsonTokenType.String)
        {
            throw new InputException($"{where}: \"{field}\" must be a string, found {Describe(reader.TokenType)}");
        }

        return reader.GetString()!;
    }

    private static void ReadEmbedding(ref Utf8JsonReader reader, string where, Document document)
    {
        reader.Read();
        if (reader.TokenType != JsonTokenType.StartArray)
        {
            throw new InputException($"{where}: \"embedding\" must be an array of numbers, found {Describe(reader.TokenType)}");
        }

        int index = 0;
        while (reader.Read() && reader.TokenType != JsonTokenType.EndArray)
        {
            if (reader.TokenType != JsonTokenType.Number)
            {
                throw new InputException($"{where}: \"embedding\" item {index} must be a number, found {Describe(reader.TokenType)}");
            }

            if (!reader.TryGetDouble(out double number) || !float.IsFinite((float)number))
            {
                throw new InputException($"{where}: \"embedding\" item {index} is outside the float32 range (about ±3.4e38)");
            }

            document.Embedding.Add((float)number);
            index++;
        }

        if (index == 0)
        {
            throw new InputException($"{where}: \"embedding\" is empty; it needs at least one number");
        }
    }

    private static bool IsBlank(ReadOnlySpan<byte> line) => line.Trim(" \t\r"u8).IsEmpty;

    private static string Describe(JsonTokenType token) => token switch
    {
        JsonTokenType.StartObject => "an object",
        JsonTokenType.StartArray => "an array",
        JsonTokenType.String => "a string",
        JsonTokenType.Number => "a number",
        JsonTokenType.True or JsonTokenType.False => "true/false",
        JsonTokenType.Null => "null",
        JsonTokenType.None => "nothing",
        _ => token.ToString(),
    };

    // Utf8JsonReader's messages end with " LineNumber: 0 | BytePositionInLine: 7."; the caller says where.
    private static string JsonReason(JsonException ex)
    {
        string message = ex.Message;
        int cut = message.IndexOf(" LineNumber:", StringComparison.Ordinal);
        return (cut >= 0 ? message[..cut] : message).TrimEnd('.', ' ');
    }

    private static string Shorten(string id) => id.Length <= 60 ? id : id[..57] + "...";
}
