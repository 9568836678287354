using TopicGroups.Protos.V1;

namespace TopicGroups.Server.Tests;

/// <summary>
/// Invented batches for tests: support tickets of a made-up coastal ferry line. Each theme has its own
/// direction in embedding space (an axis) plus seeded Gaussian noise, and its own words in the texts.
/// </summary>
public static class TestBatches
{
    public static readonly string[][] ThemeWords =
    [
        ["refund", "cancelled", "sailing"],
        ["cabin", "upgrade", "berth"],
        ["vehicle", "deck", "height"],
        ["timetable", "delay", "weather"],
        ["kennel", "dog", "pet"],
        ["wifi", "lounge", "signal"],
    ];

    private static readonly string[] CommonWords = ["hello", "ferry", "booking", "please", "help", "today"];

    /// <summary>
    /// groupCount themes of perTheme documents each, interleaved (document i belongs to theme i % groupCount).
    /// Cosine to the own axis is about 1 / sqrt(1 + dimensions · noise²); across themes about 0.
    /// </summary>
    public static (List<Document> Documents, int[] Themes) WellSeparated(
        int groupCount, int perTheme, int dimensions, int seed, double noise = 0.05)
    {
        if (groupCount > ThemeWords.Length || groupCount > dimensions)
        {
            throw new ArgumentOutOfRangeException(nameof(groupCount));
        }

        var random = new Random(seed);
        int n = groupCount * perTheme;
        var documents = new List<Document>(n);
        var themes = new int[n];
        for (int i = 0; i < n; i++)
        {
            int theme = i % groupCount;
            themes[i] = theme;
            var document = new Document { Id = $"ticket-{i:D5}", Text = TextFor(theme, random) };
            for (int j = 0; j < dimensions; j++)
            {
                document.Embedding.Add((float)((j == theme ? 1.0 : 0.0) + noise * Gaussian(random)));
            }

            documents.Add(document);
        }

        return (documents, themes);
    }

    /// <summary>Unstructured unit-variance vectors: k-means on them converges slowly (used to make long runs).</summary>
    public static List<Document> Random(int count, int dimensions, int seed)
    {
        var random = new Random(seed);
        var documents = new List<Document>(count);
        for (int i = 0; i < count; i++)
        {
            var document = new Document { Id = $"r-{i}", Text = "sailing delayed by fog" };
            for (int j = 0; j < dimensions; j++)
            {
                document.Embedding.Add((float)Gaussian(random));
            }

            documents.Add(document);
        }

        return documents;
    }

    public static Document Make(string id, params float[] embedding)
    {
        var document = new Document { Id = id, Text = "cabin upgrade request" };
        document.Embedding.Add(embedding);
        return document;
    }

    /// <summary>n valid documents with distinct ids and d-dimensional embeddings.</summary>
    public static List<Document> Valid(int n, int d = 4)
    {
        var documents = new List<Document>(n);
        for (int i = 0; i < n; i++)
        {
            var embedding = new float[d];
            embedding[i % d] = 1f;
            embedding[(i + 1) % d] += 0.5f;
            documents.Add(Make($"doc-{i}", embedding));
        }

        return documents;
    }

    private static string TextFor(int theme, Random random)
    {
        string[] own = ThemeWords[theme];
        return string.Join(
            ' ',
            CommonWords[random.Next(CommonWords.Length)],
            own[random.Next(own.Length)],
            own[random.Next(own.Length)],
            CommonWords[random.Next(CommonWords.Length)],
            own[random.Next(own.Length)]);
    }

    private static double Gaussian(Random random)
    {
        // Box-Muller transform.
        double u1 = 1.0 - random.NextDouble();
        double u2 = random.NextDouble();
        return Math.Sqrt(-2.0 * Math.Log(u1)) * Math.Cos(2.0 * Math.PI * u2);
    }
}
