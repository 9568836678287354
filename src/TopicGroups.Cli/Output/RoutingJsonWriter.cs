using System.Text.Json;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Output;

/// <summary>
/// Writes routed documents as indented JSON: "grouping" (its name) and "documents", one placement per input
/// document in input order, with the fields <c>group --output</c> writes: "id", "group", "similarity",
/// "margin", "runner_up_group", "runner_up_similarity" and "outlier" (true: fits no group).
/// </summary>
internal static class RoutingJsonWriter
{
    public static void Write(string path, string grouping, IReadOnlyList<DocumentPlacement> placements)
    {
        using var stream = new FileStream(path, FileMode.Create, FileAccess.Write, FileShare.None, bufferSize: 1 << 16);
        Write(stream, grouping, placements);
    }

    public static void Write(Stream stream, string grouping, IReadOnlyList<DocumentPlacement> placements)
    {
        using var json = new Utf8JsonWriter(stream, JsonResultWriter.WriterOptions);
        json.WriteStartObject();
        json.WriteString("grouping", grouping);
        json.WriteStartArray("documents");
        foreach (DocumentPlacement placement in placements)
        {
            JsonResultWriter.WritePlacement(json, placement);
        }

        json.WriteEndArray();
        json.WriteEndObject();
    }
}
