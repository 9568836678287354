using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Input;

/// <summary>Documents read from a JSONL file, with the file line each came from (1-based).</summary>
internal sealed class JsonlDocuments(string fileName, List<Document> documents, List<int> lineNumbers, int dimensions)
{
    public string FileName { get; } = fileName;

    public List<Document> Documents { get; } = documents;

    /// <summary>LineNumbers[i] is the line of Documents[i]; blank lines are skipped, so they can differ from i + 1.</summary>
    public List<int> LineNumbers { get; } = lineNumbers;

    /// <summary>Length of every embedding read from the file; 0 when embeddings were not read.</summary>
    public int Dimensions { get; set; } = dimensions;
}
