using System.Globalization;
using System.Text;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Output;

/// <summary>
/// Writes one row per document: id,group,similarity,margin,outlier,runner_up_group,runner_up_similarity (the
/// next-best group and its cosine, so borderline documents can be sorted out for review; 0 and 0 when there is one
/// group). Quoting follows RFC 4180:
/// a field holding a comma, double quote, CR or LF is wrapped in double quotes and its quotes are
/// doubled. Numbers use the invariant culture (a dot as decimal separator); lines end in CRLF as the RFC says.
/// </summary>
internal static class CsvAssignmentsWriter
{
    public const string HeaderLine = "id,group,similarity,margin,outlier,runner_up_group,runner_up_similarity";

    public static void Write(string path, GroupDocumentsResponse response)
    {
        using var writer = new StreamWriter(path, append: false, new UTF8Encoding(encoderShouldEmitUTF8Identifier: false), bufferSize: 1 << 16);
        Write(writer, response);
    }

    public static void Write(TextWriter writer, GroupDocumentsResponse response)
    {
        writer.Write(HeaderLine);
        writer.Write("\r\n");
        foreach (DocumentPlacement placement in response.Documents)
        {
            writer.Write(Field(placement.DocumentId));
            writer.Write(',');
            writer.Write(placement.GroupId.ToString(CultureInfo.InvariantCulture));
            writer.Write(',');
            writer.Write(Number(placement.Similarity));
            writer.Write(',');
            writer.Write(Number(placement.Margin));
            writer.Write(',');
            writer.Write(placement.IsOutlier ? "true" : "false");
            writer.Write(',');
            writer.Write(placement.RunnerUpGroupId.ToString(CultureInfo.InvariantCulture));
            writer.Write(',');
            writer.Write(Number(placement.RunnerUpSimilarity));
            writer.Write("\r\n");
        }
    }

    // Shortest text that reads back as the same float; -0 (a tie with the runner-up) is written 0.
    private static string Number(float value) => (value == 0 ? 0f : value).ToString(CultureInfo.InvariantCulture);

    internal static string Field(string value) =>
        value.AsSpan().IndexOfAny(",\"\r\n") >= 0
            ? "\"" + value.Replace("\"", "\"\"", StringComparison.Ordinal) + "\""
            : value;
}
