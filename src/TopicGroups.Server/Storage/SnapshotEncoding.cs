using System.Runtime.InteropServices;
using System.Text.Json;
using TopicGroups.Core.Grouping;
using TopicGroups.Core.Terms;

namespace TopicGroups.Server.Storage;

/// <summary>
/// How a saved grouping's parts are written into database columns: centres as one float32 little-endian blob
/// (k × d, row-major), terms, examples and options as small JSON texts.
/// </summary>
internal static class SnapshotEncoding
{
    private static readonly JsonSerializerOptions Json = new(JsonSerializerDefaults.Web);

    private sealed record StoredTerm(string Term, double Weight);

    private sealed record StoredExample(int Index, string Id, string Text, float Similarity);

    private sealed record StoredOptions(
        int GroupCount, ulong Seed, int RestartCount, int MaxIterations, int TermCount, int ExampleCount, bool IncludeBigrams,
        double OutlierScoreThreshold, int OutlierMinimumGroupSize);

    public static byte[] EncodeCentroids(float[] centroids)
    {
        if (!BitConverter.IsLittleEndian)
        {
            throw new PlatformNotSupportedException("Saved centres are stored little-endian; this machine is big-endian.");
        }

        return MemoryMarshal.AsBytes(centroids.AsSpan()).ToArray();
    }

    public static float[] DecodeCentroids(byte[] bytes, int groupCount, int dimensions)
    {
        if (bytes.Length != (long)groupCount * dimensions * sizeof(float))
        {
            throw new InvalidDataException(
                $"The stored centres hold {bytes.Length} bytes; {groupCount} groups of {dimensions} dimensions need {groupCount * dimensions * sizeof(float)}.");
        }

        return MemoryMarshal.Cast<byte, float>(bytes).ToArray();
    }

    public static string EncodeTerms(IReadOnlyList<WeightedTerm> terms) =>
        JsonSerializer.Serialize(terms.Select(t => new StoredTerm(t.Term, t.Weight)), Json);

    public static WeightedTerm[] DecodeTerms(string json) =>
        (JsonSerializer.Deserialize<StoredTerm[]>(json, Json) ?? []).Select(t => new WeightedTerm(t.Term, t.Weight)).ToArray();

    public static string EncodeExamples(IReadOnlyList<GroupExample> examples) =>
        JsonSerializer.Serialize(examples.Select(e => new StoredExample(e.DocumentIndex, e.DocumentId, e.Text, e.Similarity)), Json);

    public static GroupExample[] DecodeExamples(string json) =>
        (JsonSerializer.Deserialize<StoredExample[]>(json, Json) ?? []).Select(e => new GroupExample(e.Index, e.Id, e.Text, e.Similarity)).ToArray();

    public static string EncodeOptions(GroupingOptions options) => JsonSerializer.Serialize(
        new StoredOptions(
            options.GroupCount, options.Seed, options.RestartCount, options.MaxIterations, options.TermCount, options.ExampleCount,
            options.IncludeBigrams, options.OutlierScoreThreshold, options.OutlierMinimumGroupSize),
        Json);

    public static GroupingOptions DecodeOptions(string json)
    {
        StoredOptions stored = JsonSerializer.Deserialize<StoredOptions>(json, Json)
            ?? throw new InvalidDataException("The stored options are empty.");
        return new GroupingOptions
        {
            GroupCount = stored.GroupCount,
            Seed = stored.Seed,
            RestartCount = stored.RestartCount,
            MaxIterations = stored.MaxIterations,
            TermCount = stored.TermCount,
            ExampleCount = stored.ExampleCount,
            IncludeBigrams = stored.IncludeBigrams,
            OutlierScoreThreshold = stored.OutlierScoreThreshold,
            OutlierMinimumGroupSize = stored.OutlierMinimumGroupSize,
        };
    }
}
