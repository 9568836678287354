using TopicGroups.Core.Terms;

namespace TopicGroups.Core.Tests.Terms;

public sealed class TermCorpusTests
{
    [Fact]
    public void Build_TextsWithStopWords_StopWordsNotInAnyDocument()
    {
        TermCorpus corpus = TermCorpus.Build(["The brake is squeaking and the saddle is loose", "Please refund the rental"], includeBigrams: false);

        Assert.Equal(["brake", "squeaking", "saddle", "loose"], TermsOf(corpus, 0).Keys);
        Assert.Equal(["refund", "rental"], TermsOf(corpus, 1).Keys);
    }

    [Fact]
    public void Build_RepeatedWords_OneEntryPerTermWithItsCount()
    {
        TermCorpus corpus = TermCorpus.Build(["Dock dock DOCK unlock dock", "unlock"], includeBigrams: false);

        Assert.Equal(new Dictionary<string, int> { ["dock"] = 4, ["unlock"] = 1 }, TermsOf(corpus, 0));
        Assert.Equal([1, 2], corpus.DocumentFrequencies().Order());
        Assert.Equal(2, corpus.VocabularySize);
    }

    [Fact]
    public void Build_BigramsOn_AdjacentKeptWordsJoinedBySpace()
    {
        // "the" and "my" are stop words and "4" is dropped, so "reset" and "password" become adjacent.
        TermCorpus corpus = TermCorpus.Build(["Reset the 4 password, reset my password"], includeBigrams: true);

        Assert.Equal(
            new Dictionary<string, int> { ["reset"] = 2, ["password"] = 2, ["reset password"] = 2, ["password reset"] = 1 },
            TermsOf(corpus, 0));
    }

    [Fact]
    public void Build_BigramsOff_NoTermHasASpace()
    {
        TermCorpus corpus = TermCorpus.Build(["reset password reset password"], includeBigrams: false);

        Assert.All(Enumerable.Range(0, corpus.VocabularySize), id => Assert.DoesNotContain(' ', corpus.TermText(id)));
    }

    [Fact]
    public void Build_EmptyAndStopWordOnlyTexts_DocumentsWithoutTerms()
    {
        TermCorpus corpus = TermCorpus.Build(["", "the and of", "!!! 123", "bell"], includeBigrams: true);

        Assert.Equal(4, corpus.DocumentCount);
        Assert.Equal([0, 0, 0, 0, 1], corpus.DocumentStarts);
        Assert.Equal("bell", corpus.TermText(corpus.TermIds[0]));
    }

    [Fact]
    public void Build_SeveralChunks_EveryDocumentMatchesItsOwnTokens()
    {
        // Enough documents for three chunks; words recur across chunk borders, so the merge must map
        // each chunk's ids for the same word (and the same bigram) to one id.
        int n = 2 * TermCorpus.ChunkSize + 37;
        string[] texts = Enumerable.Range(0, n)
            .Select(i => $"Station{i % 11} the dock{i % 5} dock{i % 5} bell{i % 101} and dock{i % 5}")
            .ToArray();

        TermCorpus corpus = TermCorpus.Build(texts, includeBigrams: true);

        Assert.Equal(n, corpus.DocumentCount);
        for (int i = 0; i < n; i++)
        {
            string station = $"station{i % 11}", dock = $"dock{i % 5}", bell = $"bell{i % 101}";
            var expected = new Dictionary<string, int>
            {
                [station] = 1, [dock] = 3, [bell] = 1,
                [$"{station} {dock}"] = 1, [$"{dock} {dock}"] = 1, [$"{dock} {bell}"] = 1, [$"{bell} {dock}"] = 1,
            };
            Assert.Equal(expected, TermsOf(corpus, i));
        }

        // 11 stations + 5 docks + 101 bells, and each distinct pair once.
        int distinctPairs = Enumerable.Range(0, n)
            .SelectMany(i => new[] { $"s{i % 11} d{i % 5}", $"d{i % 5} d", $"d{i % 5} b{i % 101}", $"b{i % 101} d{i % 5}" })
            .Distinct().Count();
        Assert.Equal(11 + 5 + 101 + distinctPairs, corpus.VocabularySize);
    }

    [Fact]
    public void Build_SeveralChunks_IdsNumberTermsByFirstOccurrence()
    {
        int n = TermCorpus.ChunkSize + 10;
        string[] texts = Enumerable.Range(0, n).Select(i => i < TermCorpus.ChunkSize ? "ferry pier" : $"pier ferry harbour{i}").ToArray();

        TermCorpus corpus = TermCorpus.Build(texts, includeBigrams: false);

        Assert.Equal(["ferry", "pier"], new[] { corpus.TermText(0), corpus.TermText(1) });
        Assert.Equal($"harbour{TermCorpus.ChunkSize}", corpus.TermText(2));
        Assert.Equal(n, corpus.DocumentFrequencies()[0]);
    }

    [Fact]
    public void PairKeyComparer_PairsOfSmallIds_SpreadOverDistinctHashes()
    {
        // long's own hash is low ^ high word: pairs of ids below 128 would share at most 128 hash values.
        var hashes = new HashSet<int>();
        for (long first = 0; first < 128; first++)
        {
            for (long second = 0; second < 128; second++)
            {
                hashes.Add(TermCorpus.PairKeyComparer.Instance.GetHashCode((first << 32) | second));
            }
        }

        Assert.True(hashes.Count > 128 * 128 * 99 / 100, $"{hashes.Count} distinct hashes for {128 * 128} pairs");
    }

    [Fact]
    public void Build_CancelledToken_Throws()
    {
        using var source = new CancellationTokenSource();
        source.Cancel();

        Assert.ThrowsAny<OperationCanceledException>(() => TermCorpus.Build(["bell"], includeBigrams: false, source.Token));
    }

    internal static Dictionary<string, int> TermsOf(TermCorpus corpus, int document)
    {
        var terms = new Dictionary<string, int>();
        ReadOnlySpan<int> ids = corpus.TermIdsOf(document);
        ReadOnlySpan<int> counts = corpus.TermCountsOf(document);
        for (int j = 0; j < ids.Length; j++)
        {
            terms.Add(corpus.TermText(ids[j]), counts[j]);
        }

        return terms;
    }
}
