using Microsoft.ML;
using TopicGroups.Core.Terms;

namespace TopicGroups.Core.Tests.Terms;

public sealed class StopWordsTests
{
    [Fact]
    public void English_LoadedFromMicrosoftMl_HasTheEmbeddedListsWords()
    {
        // The resource in Microsoft.ML.Transforms 5.0.1 has 311 lines with "above" twice: 310 words
        // (counted from the resource itself when this test was written).
        IReadOnlySet<string> english = StopWords.English;
        Assert.Equal(310, english.Count);
        foreach (string word in new[] { "the", "and", "about", "because", "whereupon", "please", "would" })
        {
            Assert.Contains(word, english);
        }

        Assert.All(StopWords.English, word => Assert.Equal(word.ToLowerInvariant(), word));
        Assert.DoesNotContain("refund", english);
        Assert.DoesNotContain("brake", english);
        // Known gaps of this list (GroupTerms documents them): second-person words are not in it.
        Assert.DoesNotContain("you", english);
        Assert.DoesNotContain("your", english);
    }

    [Fact]
    public void English_SameListAsMicrosoftMlRemoveDefaultStopWords_RemovesExactlyThoseWords()
    {
        // External check against ML.NET (a general-purpose ML library): run its own English stop-word
        // remover over our whole list plus some content words; it must remove exactly our list.
        string[] contentWords = ["refund", "brake", "courier", "saddle", "invoice", "thanks", "hello"];
        string[] vocabulary = [.. StopWords.English, .. contentWords];

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
