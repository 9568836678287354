namespace TopicGroups.Core.Terms;

/// <summary>
/// A batch of texts as term ids: one vocabulary (term -> id) built in one pass, and each document stored
/// as its distinct term ids with their counts in compressed sparse rows.
/// Document i's terms are <c>TermIds[DocumentStarts[i] .. DocumentStarts[i + 1]]</c>, ascending by id,
/// and <c>TermCounts</c> holds the raw count of each beside it.
/// </summary>
/// <remarks>
/// Terms are the tokens of <see cref="Tokeniser"/> minus <see cref="StopWords.English"/>; with bigrams on,
/// each pair of adjacent kept tokens in a document ("password reset") is one more term. Unigrams and
/// bigrams share one id space, numbered in the order they first occur in the batch.
/// </remarks>
internal sealed class TermCorpus
{
    private const int StopWordId = -1;
    private const int CancellationCheckInterval = 1024;

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
        return string.Concat(_unigramTexts[(int)(parts >> 32)], " ", _unigramTexts[(int)(parts & 0xFFFF_FFFF)]);
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

        // Stop words sit in the vocabulary with a sentinel id, so each token costs one lookup.
        var vocabulary = new Dictionary<string, int>(StringComparer.Ordinal);
        foreach (string stopWord in StopWords.English)
        {
            vocabulary.Add(stopWord, StopWordId);
        }

        Dictionary<string, int>.AlternateLookup<ReadOnlySpan<char>> lookup = vocabulary.GetAlternateLookup<ReadOnlySpan<char>>();
        var bigramIds = includeBigrams ? new Dictionary<long, int>() : null;
        var unigramTexts = new List<string?>();
        var bigramParts = new List<long>();

        var documentStarts = new int[n + 1];
        int postings = 0;
        var termIds = new int[Math.Max(16, n * 16)];
        var termCounts = new int[termIds.Length];
        var kept = new int[64];                 // this document's kept unigram ids, in text order
        var terms = new int[128];               // this document's term ids (unigrams, then bigrams)
        Span<char> tokenBuffer = stackalloc char[Tokeniser.MaximumTokenLength];

        for (int i = 0; i < n; i++)
        {
            if (i % CancellationCheckInterval == 0)
            {
                cancellationToken.ThrowIfCancellationRequested();
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
                    long key = ((long)kept[t - 1] << 32) | (uint)kept[t];
                    ref int bigramId = ref System.Runtime.InteropServices.CollectionsMarshal.GetValueRefOrAddDefault(bigramIds, key, out bool exists);
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

            int start = 0;
            while (start < termCount)
            {
                int end = start + 1;
                while (end < termCount && documentTerms[end] == documentTerms[start])
                {
                    end++;
                }

                termIds[postings] = documentTerms[start];
                termCounts[postings] = end - start;
                postings++;
                start = end;
            }

            documentStarts[i + 1] = postings;
        }

        Array.Resize(ref termIds, postings);
        Array.Resize(ref termCounts, postings);
        return new TermCorpus(n, documentStarts, termIds, termCounts, unigramTexts.ToArray(), bigramParts.ToArray());
    }
}
