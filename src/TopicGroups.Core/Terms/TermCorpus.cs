using System.Runtime.InteropServices;

namespace TopicGroups.Core.Terms;

/// <summary>
/// A batch of texts as term ids: one vocabulary (term -> id) and each document stored as its distinct term
/// ids with their counts, in compressed sparse rows. Document i's terms are
/// <c>TermIds[DocumentStarts[i] .. DocumentStarts[i + 1]]</c>, each id once, and <c>TermCounts</c> holds the
/// raw count of each beside it.
/// </summary>
/// <remarks>
/// <para>Terms are the tokens of <see cref="Tokeniser"/> minus <see cref="StopWords.English"/>; with bigrams on,
/// each pair of adjacent kept tokens in a document ("password reset") is one more term. Unigrams and
/// bigrams share one id space.</para>
/// <para>Building reads each text once. Texts are cut into chunks of <see cref="ChunkSize"/> documents, each
/// chunk tokenised with its own vocabulary on any free core, then the chunk vocabularies are merged in chunk
/// order. Ids therefore number terms by first occurrence chunk by chunk, the same for any thread count.</para>
/// </remarks>
internal sealed class TermCorpus
{
    /// <summary>Documents per chunk: fixed, never derived from the core count, so results repeat anywhere.</summary>
    internal const int ChunkSize = 4096;

    private const int StopWordId = -1;
    private const int CancellationCheckInterval = 256;

    private readonly string?[] _unigramTexts;   // per term id: the word, or null for a bigram
    private readonly long[] _bigramParts;        // per term id: (first << 32) | second for a bigram, else -1

    private TermCorpus(int documentCount, int[] documentStarts, int[] termIds, int[] termCounts, string?[] unigramTexts, long[] bigramParts)
    {
        DocumentCount = documentCount;
        DocumentStarts = documentStarts;
        TermIds = termIds;
        TermCounts = termCounts;
        _unigramTexts = unigramTexts;
        _bigramParts = bigramParts;
    }

    public int DocumentCount { get; }

    /// <summary>Number of distinct terms (unigrams and bigrams) in the batch.</summary>
    public int VocabularySize => _unigramTexts.Length;

    /// <summary>Length DocumentCount + 1; row i spans [DocumentStarts[i], DocumentStarts[i + 1]).</summary>
    public int[] DocumentStarts { get; }

    public int[] TermIds { get; }

    public int[] TermCounts { get; }

    public ReadOnlySpan<int> TermIdsOf(int document) => TermIds.AsSpan(DocumentStarts[document], DocumentStarts[document + 1] - DocumentStarts[document]);

    public ReadOnlySpan<int> TermCountsOf(int document) => TermCounts.AsSpan(DocumentStarts[document], DocumentStarts[document + 1] - DocumentStarts[document]);

    /// <summary>The term's text; a bigram's two words are joined by one space (built on each call).</summary>
    public string TermText(int termId)
    {
        if (_unigramTexts[termId] is { } word)
        {
            return word;
        }

        long parts = _bigramParts[termId];
        return string.Concat(_unigramTexts[First(parts)], " ", _unigramTexts[Second(parts)]);
    }

    /// <summary>df(t): in how many documents each term occurs.</summary>
    public int[] DocumentFrequencies()
    {
        var frequencies = new int[VocabularySize];
        foreach (int termId in TermIds)
        {
            frequencies[termId]++;
        }

        return frequencies;
    }

    public static TermCorpus Build(IReadOnlyList<string> texts, bool includeBigrams, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(texts);
        int n = texts.Count;
        int chunkCount = (n + ChunkSize - 1) / ChunkSize;
        var chunks = new Chunk[chunkCount];
        Parallel.For(0, chunkCount, c =>
        {
            int start = c * ChunkSize;
            chunks[c] = Chunk.Build(texts, start, Math.Min(n, start + ChunkSize), includeBigrams, cancellationToken);
        });
        cancellationToken.ThrowIfCancellationRequested();

        // Merge the chunk vocabularies in chunk order. A chunk's bigram ids come after the ids of both its
        // words, so the words are already mapped when the bigram is reached.
        // Sizes: the largest chunk vocabulary is a lower bound on the batch's; bigrams are mostly new in each
        // chunk, so their sum over chunks is the estimate (an upper bound) that saves rehashing millions.
        int largestChunkVocabulary = 0;
        int bigramsOverChunks = 0;
        foreach (Chunk chunk in chunks)
        {
            largestChunkVocabulary = Math.Max(largestChunkVocabulary, chunk.UnigramTexts.Count - chunk.BigramCount);
            bigramsOverChunks += chunk.BigramCount;
        }

        var vocabulary = new Dictionary<string, int>(largestChunkVocabulary, StringComparer.Ordinal);
        var bigramIds = new Dictionary<long, int>(bigramsOverChunks, PairKeyComparer.Instance);
        var unigramTexts = new List<string?>(largestChunkVocabulary + bigramsOverChunks);
        var bigramParts = new List<long>(unigramTexts.Capacity);
        var globalIdOf = new int[chunkCount][];
        var postingStarts = new int[chunkCount + 1];
        for (int c = 0; c < chunkCount; c++)
        {
            cancellationToken.ThrowIfCancellationRequested();
            Chunk chunk = chunks[c];
            int[] map = new int[chunk.UnigramTexts.Count];
            for (int local = 0; local < map.Length; local++)
            {
                int id;
                if (chunk.UnigramTexts[local] is { } word)
                {
                    ref int slot = ref CollectionsMarshal.GetValueRefOrAddDefault(vocabulary, word, out bool exists);
                    if (!exists)
                    {
                        slot = unigramTexts.Count;
                        unigramTexts.Add(word);
                        bigramParts.Add(-1);
                    }

                    id = slot;
                }
                else
                {
                    long parts = chunk.BigramParts[local];
                    long key = PairKey(map[First(parts)], map[Second(parts)]);
                    ref int slot = ref CollectionsMarshal.GetValueRefOrAddDefault(bigramIds, key, out bool exists);
                    if (!exists)
                    {
                        slot = unigramTexts.Count;
                        unigramTexts.Add(null);
                        bigramParts.Add(key);
                    }

                    id = slot;
                }

                map[local] = id;
            }

            globalIdOf[c] = map;
            postingStarts[c + 1] = postingStarts[c] + chunk.PostingCount;
        }

        int postings = postingStarts[chunkCount];
        var termIds = new int[postings];
        var termCounts = new int[postings];
        var documentStarts = new int[n + 1];
        Parallel.For(0, chunkCount, c =>
        {
            Chunk chunk = chunks[c];
            int offset = postingStarts[c];
            int[] map = globalIdOf[c];
            for (int p = 0; p < chunk.PostingCount; p++)
            {
                termIds[offset + p] = map[chunk.TermIds[p]];
            }

            chunk.TermCounts.AsSpan(0, chunk.PostingCount).CopyTo(termCounts.AsSpan(offset));
            int firstDocument = c * ChunkSize;
            for (int d = 1; d < chunk.DocumentStarts.Length; d++)
            {
                documentStarts[firstDocument + d] = offset + chunk.DocumentStarts[d];
            }
        });

        return new TermCorpus(n, documentStarts, termIds, termCounts, unigramTexts.ToArray(), bigramParts.ToArray());
    }

    private static long PairKey(int first, int second) => ((long)first << 32) | (uint)second;

    private static int First(long pairKey) => (int)(pairKey >> 32);

    private static int Second(long pairKey) => (int)(pairKey & 0xFFFF_FFFF);

    /// <summary>One chunk of documents with chunk-local term ids (first occurrence order within the chunk).</summary>
    private sealed class Chunk
    {
        public required List<string?> UnigramTexts { get; init; }
        public required List<long> BigramParts { get; init; }
        public required int[] DocumentStarts { get; init; }   // local: length (documents in chunk) + 1
        public required int[] TermIds { get; init; }          // local ids; only the first PostingCount are used
        public required int[] TermCounts { get; init; }
        public required int PostingCount { get; init; }
        public required int BigramCount { get; init; }

        public static Chunk Build(IReadOnlyList<string> texts, int start, int end, bool includeBigrams, CancellationToken cancellationToken)
        {
            // Stop words sit in the vocabulary with a sentinel id, so each token costs one lookup.
            var vocabulary = new Dictionary<string, int>(StringComparer.Ordinal);
            foreach (string stopWord in StopWords.English)
            {
                vocabulary.Add(stopWord, StopWordId);
            }

            Dictionary<string, int>.AlternateLookup<ReadOnlySpan<char>> lookup = vocabulary.GetAlternateLookup<ReadOnlySpan<char>>();
            // Word pairs repeat far less than words, so a chunk holds about as many distinct pairs as documents
            // times 16 or more; start the pair table there instead of rehashing it a dozen times.
            var bigramIds = includeBigrams ? new Dictionary<long, int>((end - start) * 16, PairKeyComparer.Instance) : null;
            var unigramTexts = new List<string?>(includeBigrams ? (end - start) * 20 : 1024);
            var bigramParts = new List<long>(unigramTexts.Capacity);

            var documentStarts = new int[end - start + 1];
            int postings = 0;
            var termIds = new int[(end - start) * (includeBigrams ? 48 : 24) + 16];
            var termCounts = new int[termIds.Length];
            var kept = new int[64];          // this document's kept unigram ids, in text order
            var terms = new int[128];        // this document's term ids (unigrams, then bigrams)
            Span<char> tokenBuffer = stackalloc char[Tokeniser.MaximumTokenLength];

            for (int i = start; i < end; i++)
            {
                if ((i - start) % CancellationCheckInterval == 0 && cancellationToken.IsCancellationRequested)
                {
                    break;   // Build throws once every chunk has stopped
                }

                int keptCount = 0;
                TokenReader reader = Tokeniser.Read(texts[i], tokenBuffer);
                while (reader.MoveNext())
                {
                    ReadOnlySpan<char> token = reader.Current;
                    if (!lookup.TryGetValue(token, out int id))
                    {
                        id = unigramTexts.Count;
                        string word = token.ToString();
                        vocabulary.Add(word, id);
                        unigramTexts.Add(word);
                        bigramParts.Add(-1);
                    }

                    if (id == StopWordId)
                    {
                        continue;
                    }

                    if (keptCount == kept.Length)
                    {
                        Array.Resize(ref kept, kept.Length * 2);
                    }

                    kept[keptCount++] = id;
                }

                int termCount = keptCount + (bigramIds is null ? 0 : Math.Max(0, keptCount - 1));
                if (terms.Length < termCount)
                {
                    Array.Resize(ref terms, Math.Max(termCount, terms.Length * 2));
                }

                kept.AsSpan(0, keptCount).CopyTo(terms);
                if (bigramIds is not null)
                {
                    for (int t = 1; t < keptCount; t++)
                    {
                        long key = PairKey(kept[t - 1], kept[t]);
                        ref int bigramId = ref CollectionsMarshal.GetValueRefOrAddDefault(bigramIds, key, out bool exists);
                        if (!exists)
                        {
                            bigramId = unigramTexts.Count;
                            unigramTexts.Add(null);
                            bigramParts.Add(key);
                        }

                        terms[keptCount + t - 1] = bigramId;
                    }
                }

                // Distinct ids with counts: sort, then collapse runs.
                Span<int> documentTerms = terms.AsSpan(0, termCount);
                documentTerms.Sort();
                if (termIds.Length < postings + termCount)
                {
                    int size = Math.Max(postings + termCount, termIds.Length * 2);
                    Array.Resize(ref termIds, size);
                    Array.Resize(ref termCounts, size);
                }

                int run = 0;
                while (run < termCount)
                {
                    int runEnd = run + 1;
                    while (runEnd < termCount && documentTerms[runEnd] == documentTerms[run])
                    {
                        runEnd++;
                    }

                    termIds[postings] = documentTerms[run];
                    termCounts[postings] = runEnd - run;
                    postings++;
                    run = runEnd;
                }

                documentStarts[i - start + 1] = postings;
            }

            return new Chunk
            {
                UnigramTexts = unigramTexts,
                BigramParts = bigramParts,
                DocumentStarts = documentStarts,
                TermIds = termIds,
                TermCounts = termCounts,
                PostingCount = postings,
                BigramCount = bigramIds?.Count ?? 0,
            };
        }
    }

    // A pair key is (first << 32) | second with both ids small, so long's own hash (low ^ high word) would
    // put every bigram into a few thousand buckets; a multiplicative mix (Fibonacci hashing) spreads them.
    internal sealed class PairKeyComparer : IEqualityComparer<long>
    {
        public static readonly PairKeyComparer Instance = new();

        public bool Equals(long x, long y) => x == y;

        public int GetHashCode(long key) => (int)((ulong)key * 0x9E37_79B9_7F4A_7C15UL >> 32);
    }
}
