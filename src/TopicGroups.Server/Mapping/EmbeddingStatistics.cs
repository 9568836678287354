using TopicGroups.Server.Embedding;
using Proto = TopicGroups.Protos.V1;

namespace TopicGroups.Server.Mapping;

/// <summary>The server's embedding stage into the reply: which model made the vectors, how long it took, what was cut.</summary>
internal static class EmbeddingStatistics
{
    public static void AddTo(Proto.RunStatistics statistics, EmbeddingRun run)
    {
        statistics.EmbeddingModel = run.Model;
        statistics.EmbeddingSeconds = run.Elapsed.TotalSeconds;
        statistics.TruncatedTextCount = run.TruncatedTextCount;
    }

    public static Proto.GroupingProgress Progress(int done, int total) => new()
    {
        Stage = Proto.GroupingStage.Embedding,
        DocumentsEmbedded = done,
        DocumentsToEmbed = total,
    };
}
