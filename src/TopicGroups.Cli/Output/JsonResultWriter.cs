using System.Text.Encodings.Web;
using System.Text.Json;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Output;

/// <summary>
/// Writes the result as indented JSON: "options" (what was asked), "statistics" (the run),
/// "groups" (id, size, cohesion, terms, examples, outlier_count) and "documents" (one placement
/// per input document, in input order). Streams with <see cref="Utf8JsonWriter"/>, so a large
/// batch is never held twice in memory.
/// </summary>
internal static class JsonResultWriter
{
    internal static readonly JsonWriterOptions WriterOptions = new()
    {
        Indented = true,
        // Files, not HTML: keep accents, quotes and symbols readable instead of \u-escaping them.
        Encoder = JavaScriptEncoder.UnsafeRelaxedJsonEscaping,
    };

    public static void Write(string path, GroupDocumentsResponse response, GroupingOptions options)
    {
        using var stream = new FileStream(path, FileMode.Create, FileAccess.Write, FileShare.None, bufferSize: 1 << 16);
        Write(stream, response, options);
    }

    public static void Write(Stream stream, GroupDocumentsResponse response, GroupingOptions options)
    {
        using var json = new Utf8JsonWriter(stream, WriterOptions);
        json.WriteStartObject();
        WriteOptions(json, options);
        WriteStatistics(json, response.Statistics ?? new RunStatistics());
        QualityJson.WriteChoice(json, response.GroupCountChoice);
        QualityJson.WriteOverall(json, response.Quality);

        json.WriteStartArray("groups");
        foreach (Group group in response.Groups)
        {
            json.WriteStartObject();
            json.WriteNumber("id", group.Id);
            json.WriteNumber("size", group.Size);
            json.WriteNumber("cohesion", group.Cohesion);
            json.WriteNumber("outlier_count", group.OutlierCount);
            QualityJson.WriteGroup(json, group);
            json.WriteStartArray("terms");
            foreach (WeightedTerm term in group.Terms)
            {
                json.WriteStartObject();
                json.WriteString("term", term.Term);
                json.WriteNumber("weight", term.Weight);
                json.WriteEndObject();
            }

            json.WriteEndArray();
            json.WriteStartArray("examples");
            foreach (GroupExample example in group.Examples)
            {
                json.WriteStartObject();
                json.WriteString("id", example.DocumentId);
                json.WriteNumber("similarity", example.Similarity);
                json.WriteString("text", example.Text);
                json.WriteEndObject();
            }

            json.WriteEndArray();
            json.WriteEndObject();
        }

        json.WriteEndArray();

        json.WriteStartArray("documents");
        foreach (DocumentPlacement placement in response.Documents)
        {
            WritePlacement(json, placement);
        }

        json.WriteEndArray();
        ChangeReportJson.Write(json, response);
        json.WriteEndObject();
    }

    // 0 in the request means "server default"; JSON shows that as null rather than a fake 0.
    /// <summary>One document's placement, as both <c>group</c> and <c>route</c> write it.</summary>
    internal static void WritePlacement(Utf8JsonWriter json, DocumentPlacement placement)
    {
        json.WriteStartObject();
        json.WriteString("id", placement.DocumentId);
        json.WriteNumber("group", placement.GroupId);
        json.WriteNumber("similarity", placement.Similarity);
        json.WriteNumber("margin", placement.Margin);
        // The contract sends 0 when there is no runner-up (one group); JSON says so with null.
        if (placement.RunnerUpGroupId > 0)
        {
            json.WriteNumber("runner_up_group", placement.RunnerUpGroupId);
        }
        else
        {
            json.WriteNull("runner_up_group");
        }

        json.WriteNumber("runner_up_similarity", placement.RunnerUpSimilarity);
        json.WriteBoolean("outlier", placement.IsOutlier);
        json.WriteEndObject();
    }

    private static void WriteOptions(Utf8JsonWriter json, GroupingOptions options)
    {
        json.WriteStartObject("options");
        // 0 asks the service to choose: null here, and the range (or null for the default range) beside it.
        if (options.GroupCount > 0)
        {
            json.WriteNumber("group_count", options.GroupCount);
        }
        else
        {
            json.WriteNull("group_count");
        }

        if (options.GroupCount == 0 && options.GroupCountRange is { } range)
        {
            json.WriteStartObject("group_count_range");
            WritePositiveOrNull(json, "minimum", range.Minimum);
            WritePositiveOrNull(json, "maximum", range.Maximum);
            json.WriteEndObject();
        }
        else
        {
            json.WriteNull("group_count_range");
        }

        if (options.HasSeed)
        {
            json.WriteNumber("seed", options.Seed);
        }
        else
        {
            json.WriteNull("seed");
        }

        WritePositiveOrNull(json, "restart_count", options.RestartCount);
        WritePositiveOrNull(json, "max_iterations", options.MaxIterations);
        WritePositiveOrNull(json, "term_count", options.TermCount);
        WritePositiveOrNull(json, "example_count", options.ExampleCount);
        json.WriteBoolean("include_bigrams", options.IncludeBigrams);
        WritePositiveOrNull(json, "silhouette_sample_size", options.SilhouetteSampleSize);
        if (options.OutlierThreshold > 0)
        {
            json.WriteNumber("outlier_threshold", options.OutlierThreshold);
        }
        else
        {
            json.WriteNull("outlier_threshold");
        }

        WritePositiveOrNull(json, "outlier_minimum_group_size", options.OutlierMinimumGroupSize);
        json.WriteEndObject();
    }

    private static void WriteStatistics(Utf8JsonWriter json, RunStatistics statistics)
    {
        json.WriteStartObject("statistics");
        json.WriteNumber("document_count", statistics.DocumentCount);
        json.WriteNumber("dimensions", statistics.Dimensions);
        json.WriteNumber("objective", statistics.Objective);
        json.WriteNumber("iterations", statistics.Iterations);
        json.WriteBoolean("converged", statistics.Converged);
        json.WriteNumber("restart_count", statistics.RestartCount);
        json.WriteNumber("seconds", statistics.Seconds);
        json.WriteNumber("seeding_seconds", statistics.SeedingSeconds);
        // The model that made the vectors when the service embedded the texts; null when they came with the input.
        if (statistics.EmbeddingModel.Length > 0)
        {
            json.WriteString("embedding_model", statistics.EmbeddingModel);
            json.WriteNumber("embedding_seconds", statistics.EmbeddingSeconds);
            json.WriteNumber("truncated_text_count", statistics.TruncatedTextCount);
        }
        else
        {
            json.WriteNull("embedding_model");
        }

        json.WriteEndObject();
    }

    private static void WritePositiveOrNull(Utf8JsonWriter json, string name, int value)
    {
        if (value > 0)
        {
            json.WriteNumber(name, value);
        }
        else
        {
            json.WriteNull(name);
        }
    }
}
