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
/// each pair of adjacent kept tokens in a document ("password reset") is one more term. Words and pairs
/// share one id space: words first, numbered in order of first occurrence in the batch, then pairs.</para>
/// <para>Building reads each text once. Texts are cut into chunks of <see cref="ChunkSize"/> documents, each
/// chunk tokenised with its own vocabulary on any free core, then the chunk vocabularies are merged in chunk
/// order (pairs in a fixed number of hash partitions, see <see cref="MergeWordPairs"/>). Chunk size and
/// partition count are constants, so the ids are the same for any number of cores.</para>
/// </remarks>
internal sealed class TermCorpus
{
    /// <summary>Documents per chunk: fixed, never derived from the core count, so results repeat anywhere.</summary>
    internal const int ChunkSize = 4096;

    private const int StopWordId = -1;
    private const int CancellationCheckInterval = 256;

    /// <summary>Word pairs are split over this many hash partitions while merging (a constant: see <see cref="MergeWordPairs"/>).</summary>
    private const int PairPartitionCount = 8;

    private readonly string[] _words;      // term ids 0 .. W-1 are words
    private readonly long[] _pairKeys;     // term id W + j is the pair _pairKeys[j] = (first word id << 32) | second

    private TermCorpus(int documentCount, int[] documentStarts, int[] termIds, int[] termCounts, string[] words, long[] pairKeys)
    {
        DocumentCount = documentCount;
        DocumentStarts = documentStarts;
        TermIds = termIds;
        TermCounts = termCounts;
        _words = words;
        _pairKeys = pairKeys;
    }

    public int DocumentCount { get; }

    /// <summary>Number of distinct terms (unigrams and bigrams) in the batch.</summary>
    public int VocabularySize => _words.Length + _pairKeys.Length;

    /// <summary>Length DocumentCount + 1; row i spans [DocumentStarts[i], DocumentStarts[i + 1]).</summary>
    public int[] DocumentStarts { get; }

    public int[] TermIds { get; }

    public int[] TermCounts { get; }

    public ReadOnlySpan<int> TermIdsOf(int document) => TermIds.AsSpan(DocumentStarts[document], DocumentStarts[document + 1] - DocumentStarts[document]);

    public ReadOnlySpan<int> TermCountsOf(int document) => TermCounts.AsSpan(DocumentStarts[document], DocumentStarts[document + 1] - DocumentStarts[document]);

    /// <summary>The term's text; a bigram's two words are joined by one space (built on each call).</summary>
    public string TermText(int termId)
    {
        if (termId < _words.Length)
        {
            return _words[termId];
        }

        long pair = _pairKeys[termId - _words.Length];
        return string.Concat(_words[First(pair)], " ", _words[Second(pair)]);
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

        // Words: merge the chunk vocabularies in chunk order (a chunk holds a few thousand distinct words).
        int largestChunkVocabulary = 0;
        int bigramsOverChunks = 0;
        foreach (Chunk chunk in chunks)
        {
            largestChunkVocabulary = Math.Max(largestChunkVocabulary, chunk.UnigramTexts.Count - chunk.BigramCount);
            bigramsOverChunks += chunk.BigramCount;
        }

        var vocabulary = new Dictionary<string, int>(largestChunkVocabulary, StringComparer.Ordinal);
        var words = new List<string>(largestChunkVocabulary);
        var globalIdOf = new int[chunkCount][];   // per chunk, per chunk-local id: the batch id
        for (int c = 0; c < chunkCount; c++)
        {
            cancellationToken.ThrowIfCancellationRequested();
            List<string?> localTexts = chunks[c].UnigramTexts;
            int[] map = new int[localTexts.Count];
            for (int local = 0; local < map.Length; local++)
            {
                if (localTexts[local] is { } word)
                {
                    ref int slot = ref CollectionsMarshal.GetValueRefOrAddDefault(vocabulary, word, out bool exists);
                    if (!exists)
                    {
                        slot = words.Count;
                        words.Add(word);
                    }

                    map[local] = slot;
                }
            }

            globalIdOf[c] = map;
        }

        long[] pairKeys = includeBigrams
            ? MergeWordPairs(chunks, globalIdOf, words.Count, bigramsOverChunks, cancellationToken)
            : [];

        var postingStarts = new int[chunkCount + 1];
        for (int c = 0; c < chunkCount; c++)
        {
            postingStarts[c + 1] = postingStarts[c] + chunks[c].PostingCount;
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

        return new TermCorpus(n, documentStarts, termIds, termCounts, words.ToArray(), pairKeys);
    }

    /// <summary>
    /// Numbers the word pairs of all chunks and fills in their batch ids in <paramref name="globalIdOf"/>.
    /// A pair's key is the pair of batch word ids. Keys are split by hash into <see cref="PairPartitionCount"/>
    /// partitions, each numbered on its own core in chunk order; the partitions follow the words end to end.
    /// The partition count is a constant, so ids never depend on the core count.
    /// </summary>
    /// <returns>Per pair id minus the word count: its key.</returns>
    private static long[] MergeWordPairs(Chunk[] chunks, int[][] globalIdOf, int wordCount, int bigramsOverChunks, CancellationToken cancellationToken)
    {
        int chunkCount = chunks.Length;
        var keysOf = new long[chunkCount][];   // per chunk, per chunk-local id: the pair's key, or -1 for a word
        Parallel.For(0, chunkCount, c =>
        {
            List<long> localParts = chunks[c].BigramParts;
            int[] map = globalIdOf[c];
            var keys = new long[localParts.Count];
            for (int local = 0; local < keys.Length; local++)
            {
                long parts = localParts[local];
                keys[local] = parts < 0 ? -1 : PairKey(map[First(parts)], map[Second(parts)]);
            }

            keysOf[c] = keys;
        });
        cancellationToken.ThrowIfCancellationRequested();

        var partitionKeys = new List<long>[PairPartitionCount];
        Parallel.For(0, PairPartitionCount, partition =>
        {
            // Sums over chunks overcount pairs seen in several chunks: an upper bound that avoids rehashing.
            var ids = new Dictionary<long, int>(bigramsOverChunks / PairPartitionCount + 16, PairKeyComparer.Instance);
            var keys = new List<long>();
            for (int c = 0; c < chunkCount; c++)
            {
                // One partition walks every chunk's pairs (hundreds of milliseconds for long texts): look at the
                // token between chunks, so a deadline stops it within one chunk's walk.
                if (cancellationToken.IsCancellationRequested)
                {
                    return;
                }

                long[] keysOfChunk = keysOf[c];
                int[] map = globalIdOf[c];
                for (int local = 0; local < keysOfChunk.Length; local++)
                {
                    long key = keysOfChunk[local];
                    if (key < 0 || PartitionOf(key) != partition)
                    {
                        continue;
                    }

                    ref int slot = ref CollectionsMarshal.GetValueRefOrAddDefault(ids, key, out bool exists);
                    if (!exists)
                    {
                        slot = keys.Count;
                        keys.Add(key);
                    }

                    map[local] = slot;   // the index within the partition; the partition's start is added below
                }
            }

            partitionKeys[partition] = keys;
        });
        cancellationToken.ThrowIfCancellationRequested();

        var partitionStarts = new int[PairPartitionCount + 1];
        partitionStarts[0] = wordCount;
        for (int partition = 0; partition < PairPartitionCount; partition++)
        {
            partitionStarts[partition + 1] = partitionStarts[partition] + partitionKeys[partition].Count;
        }

        Parallel.For(0, chunkCount, c =>
        {
            long[] keysOfChunk = keysOf[c];
            int[] map = globalIdOf[c];
            for (int local = 0; local < keysOfChunk.Length; local++)
            {
                if (keysOfChunk[local] >= 0)
                {
                    map[local] += partitionStarts[PartitionOf(keysOfChunk[local])];
                }
            }
        });

        var pairKeys = new long[partitionStarts[PairPartitionCount] - wordCount];
        for (int partition = 0; partition < PairPartitionCount; partition++)
        {
            partitionKeys[partition].CopyTo(pairKeys, partitionStarts[partition] - wordCount);
        }

        return pairKeys;
    }

    // Top three bits of a multiplicative hash with a multiplier other than PairKeyComparer's, so a partition's
    // keys still spread over its dictionary's buckets.
    private static int PartitionOf(long pairKey) => (int)((ulong)pairKey * 0xD6E8_FEB8_6659_FD93UL >> 61);

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
