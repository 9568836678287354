using Microsoft.ML;
using TopicGroups.Core.Terms;

namespace TopicGroups.Core.Tests.Terms;

public sealed class StopWordsTests
{
    [Fact]
    public void English_LoadedFromMicrosoftMl_HasTheEmbeddedListsWords()
    {
        // The resource in Microsoft.ML.Transforms 5.0.1 has 311 lines with "above" twice: 310 words
        // (counted from the resource itself when this test was written); our supplement adds 7.
        IReadOnlySet<string> english = StopWords.English;
        Assert.Equal(310 + StopWords.Supplement.Length, english.Count);
        foreach (string word in new[] { "the", "and", "about", "because", "whereupon", "please", "would" })
        {
            Assert.Contains(word, english);
        }

        Assert.All(StopWords.English, word => Assert.Equal(word.ToLowerInvariant(), word));
        Assert.DoesNotContain("refund", english);
        Assert.DoesNotContain("brake", english);
        // The resource's gaps are filled by the supplement: second-person words and "yet" are stop words.
        Assert.Contains("you", english);
        Assert.Contains("your", english);
        Assert.Contains("yet", english);
    }

    [Fact]
    public void Supplement_WordsScikitLearnListsAndMicrosoftMlLacks()
    {
        // External check: each supplement word is in scikit-learn 1.2.1's ENGLISH_STOP_WORDS (Debian python3-sklearn;
        // `python3 -c "from sklearn.feature_extraction.text import ENGLISH_STOP_WORDS as s; print(sorted(s))"`)
        // and not in ML.NET's resource, so the supplement only fills gaps.
        IReadOnlySet<string> microsoftMl = StopWords.Load(StopWords.EnglishResourceName);
        Assert.All(StopWords.Supplement, word => Assert.DoesNotContain(word, microsoftMl));
    }

    [Fact]
    public void English_SameListAsMicrosoftMlRemoveDefaultStopWords_RemovesExactlyThoseWords()
    {
        // External check against ML.NET (a general-purpose ML library): run its own English stop-word
        // remover over our whole list plus some content words; it must remove exactly our list.
        string[] contentWords = ["refund", "brake", "courier", "saddle", "invoice", "thanks", "hello"];
        string[] vocabulary = [.. StopWords.Load(StopWords.EnglishResourceName), .. contentWords];

        var ml = new MLContext(seed: 1);
        var data = ml.Data.LoadFromEnumerable([new WordsRow { Words = vocabulary }]);
        var remover = ml.Transforms.Text.RemoveDefaultStopWords(
            "Kept", "Words", Microsoft.ML.Transforms.Text.StopWordsRemovingEstimator.Language.English);
        var kept = ml.Data.CreateEnumerable<KeptRow>(remover.Fit(data).Transform(data), reuseRowObject: false).Single().Kept;

        Assert.Equal(contentWords, kept);
    }

    [Fact]
    public void Load_MissingResource_ThrowsSayingWhatToFix()
    {
        var exception = Assert.Throws<InvalidOperationException>(() => StopWords.Load("No.Such.StopWords.txt"));
        Assert.Contains("No.Such.StopWords.txt", exception.Message);
    }

    private sealed class WordsRow
    {
        public string[] Words { get; set; } = [];
    }

    private sealed class KeptRow
    {
        public string[] Kept { get; set; } = [];
    }
}
