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
