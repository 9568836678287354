using System.Text.Encodings.Web;
using System.Text.Json;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Output;

/// <summary>
/// Writes routed documents as indented JSON: "grouping" (its name) and "documents", one placement per input
/// document in input order, with the fields <c>group --output</c> writes: "id", "group", "similarity",
/// "margin", "runner_up_group" and "outlier" (true: fits no group).
/// </summary>
internal static class RoutingJsonWriter
{
    private static readonly JsonWriterOptions WriterOptions = new()
    {
        Indented = true,
        Encoder = JavaScriptEncoder.UnsafeRelaxedJsonEscaping,
    };

    public static void Write(string path, string grouping, IReadOnlyList<DocumentPlacement> placements)
    {
        using var stream = new FileStream(path, FileMode.Create, FileAccess.Write, FileShare.None, bufferSize: 1 << 16);
        Write(stream, grouping, placements);
    }

    public static void Write(Stream stream, string grouping, IReadOnlyList<DocumentPlacement> placements)
    {
        using var json = new Utf8JsonWriter(stream, WriterOptions);
        json.WriteStartObject();
        json.WriteString("grouping", grouping);
        json.WriteStartArray("documents");
        foreach (DocumentPlacement placement in placements)
        {
            json.WriteStartObject();
            json.WriteString("id", placement.DocumentId);
            json.WriteNumber("group", placement.GroupId);
            json.WriteNumber("similarity", placement.Similarity);
            json.WriteNumber("margin", placement.Margin);
            if (placement.RunnerUpGroupId > 0)
            {
                json.WriteNumber("runner_up_group", placement.RunnerUpGroupId);
            }
            else
            {
                json.WriteNull("runner_up_group");
            }

            json.WriteBoolean("outlier", placement.IsOutlier);
            json.WriteEndObject();
        }

        json.WriteEndArray();
        json.WriteEndObject();
    }
}
