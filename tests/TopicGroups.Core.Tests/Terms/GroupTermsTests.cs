using TopicGroups.Core.Terms;

namespace TopicGroups.Core.Tests.Terms;

public sealed class GroupTermsTests
{
    // An invented inbox of a fictional city bike-rental service: two themes (broken bikes, billing), each
    // ticket wrapped in the same greetings and filler that every support inbox has.
    private static readonly string[] BikeWords = ["brake", "chain", "saddle", "tyre", "pedal", "gears"];
    private static readonly string[] BillingWords = ["invoice", "refund", "charged", "deposit", "receipt", "card"];
    private static readonly string[] Filler = ["hello", "thanks", "issue", "regards", "team", "help", "today"];

    private static readonly GroupTermsOptions Defaults = new();

    [Fact]
    public void TopTermsPerGroup_TwoThemesSharedFiller_EachGroupListsItsOwnWordsAndNoFiller()
    {
        (string[] texts, int[] assignments) = TwoThemeInbox(perGroup: 30, seed: 11);

        IReadOnlyList<WeightedTerm>[] terms = GroupTerms.TopTermsPerGroup(texts, assignments, 2, Defaults with { TermCount = 6 });

        Assert.Equal(BikeWords.Order(), terms[0].Select(t => t.Term).Order());
        Assert.Equal(BillingWords.Order(), terms[1].Select(t => t.Term).Order());
        Assert.All(terms, list => Assert.True(IsDescending(list), "weights must be highest first"));
    }

    [Fact]
    public void TopTermsPerGroup_MoreSlotsThanThemeWords_FillerOnlyBelowAndInOneGroupAtMost()
    {
        // With 8 slots and 6 theme words, a filler word that happens to be a little more frequent in one group
        // may take a slot, but below every theme word, at a fraction of their weight, and never in both groups
        // (with two groups, a word above the rest of the batch in one is below it in the other).
        (string[] texts, int[] assignments) = TwoThemeInbox(perGroup: 30, seed: 11);

        IReadOnlyList<WeightedTerm>[] terms = GroupTerms.TopTermsPerGroup(texts, assignments, 2, Defaults);

        string[][] themes = [BikeWords, BillingWords];
        for (int g = 0; g < 2; g++)
        {
            Assert.Equal(themes[g].Order(), terms[g].Take(6).Select(t => t.Term).Order());
            double weakestTheme = terms[g][5].Weight;
            Assert.All(terms[g].Skip(6), t => Assert.True(t.Weight < weakestTheme / 2, $"{t} too close to {weakestTheme}"));
        }

        Assert.Empty(terms[0].Select(t => t.Term).Intersect(terms[1].Select(t => t.Term)));
    }

    [Fact]
    public void TopTermsPerGroup_FiveThemesCommonWordsEverywhere_NoCommonWordInAnyTopFive()
    {
        // Five invented themes of a bike-rental inbox, 40 tickets each: three theme words per ticket and four of
        // the words every ticket uses ("thanks", "issue", ...), which occur in 40-60% of the batch.
        string[][] themes =
        [
            ["brake", "chain", "saddle", "tyre", "pedal", "gears", "bell", "spoke"],
            ["invoice", "refund", "charged", "deposit", "receipt", "card", "bank", "payment"],
            ["dock", "station", "unlock", "return", "slot", "locked", "kiosk", "code"],
            ["app", "login", "password", "crash", "update", "screen", "phone", "account"],
            ["helmet", "lost", "found", "bag", "keys", "wallet", "basket", "jacket"],
        ];
        var random = new Random(21);
        var texts = new List<string>();
        var assignments = new List<int>();
        for (int i = 0; i < 200; i++)
        {
            int group = i % themes.Length;
            IEnumerable<string> words = themes[group].OrderBy(_ => random.Next()).Take(3)
                .Concat(Filler.OrderBy(_ => random.Next()).Take(4));
            texts.Add(string.Join(' ', words.OrderBy(_ => random.Next())));
            assignments.Add(group);
        }

        IReadOnlyList<WeightedTerm>[] terms = GroupTerms.TopTermsPerGroup(texts, assignments.ToArray(), themes.Length, Defaults with { TermCount = 5 });

        for (int g = 0; g < themes.Length; g++)
        {
            Assert.Equal(5, terms[g].Count);
            Assert.All(terms[g], t => Assert.Contains(t.Term, themes[g]));
        }
    }

    [Fact]
    public void TopTermsPerGroup_FillerUnevenAcrossGroups_DistinctiveWordsStillOnTop()
    {
        // "thanks" and "hello" appear in every ticket of group 0 but only half of group 1, so group 0 holds
        // more of them than the rest of the batch; they may be listed, but never above its own words.
        (string[] texts, int[] assignments) = TwoThemeInbox(perGroup: 30, seed: 3);
        for (int i = 0; i < texts.Length; i++)
        {
            if (assignments[i] == 0 || i % 2 == 0)
            {
                texts[i] = "thanks hello " + texts[i];
            }
        }

        IReadOnlyList<WeightedTerm>[] terms = GroupTerms.TopTermsPerGroup(texts, assignments, 2, Defaults with { TermCount = 3 });

        Assert.All(terms[0], t => Assert.Contains(t.Term, BikeWords));
        Assert.All(terms[1], t => Assert.Contains(t.Term, BillingWords));
    }

    [Fact]
    public void TopTermsPerGroup_SmallCorpus_WeightsAsComputedByHand()
    {
        // By the formula on GroupTerms: N = 3; idf(alpha) = ln(3/2) = 0.405465, idf(others) = ln 3 = 1.098612.
        // Document 0: (alpha, beta) = (0.405465, 1.098612) / 1.171047 = (0.346242, 0.938145); document 1 the
        // same with gamma; document 2: delta = epsilon = 1/√2. Group 0 = {0, 1}: centroid beta = gamma =
        // 0.469073, alpha = 0.346242; the rest (document 2) has none of them. Group 1: 0.707107 each.
        string[] texts = ["alpha beta", "alpha gamma", "delta epsilon"];

        IReadOnlyList<WeightedTerm>[] terms = GroupTerms.TopTermsPerGroup(texts, [0, 0, 1], 2, Defaults);

        Assert.Equal(["beta", "gamma", "alpha"], terms[0].Select(t => t.Term));   // tie: first seen first
        Assert.Equal([0.469073, 0.469073, 0.346242], terms[0].Select(t => Math.Round(t.Weight, 6)));
        Assert.Equal(["delta", "epsilon"], terms[1].Select(t => t.Term));
        Assert.Equal([0.707107, 0.707107], terms[1].Select(t => Math.Round(t.Weight, 6)));
    }

    [Fact]
    public void TopTermsPerGroup_WordInBothGroups_RestOfBatchSubtracted()
    {
        // "dock" is in every document of group 0 and in one of group 1. Hand computation: N = 4,
        // idf(dock) = ln(4/3) = 0.287682, idf(unlock) = idf(station) = ln 2 = 0.693147.
        // Documents 0 and 1 "dock unlock": norm 0.750476, dock 0.383333. Document 2 "dock station": the same.
        // Group 0 = {0, 1}: c(dock) = 0.383333; rest {2, 3}: (0.383333 + 0) / 2 = 0.191666; weight 0.191666.
        string[] texts = ["dock unlock", "dock unlock", "dock station", "station"];

        IReadOnlyList<WeightedTerm>[] terms = GroupTerms.TopTermsPerGroup(texts, [0, 0, 1, 1], 2, Defaults);
        IReadOnlyList<WeightedTerm>[] centroidOnly = GroupTerms.TopTermsPerGroup(
            texts, [0, 0, 1, 1], 2, Defaults with { CompareWithRestOfBatch = false });

        Assert.Equal(0.191666, terms[0].Single(t => t.Term == "dock").Weight, 6);
        Assert.Equal(0.383333, centroidOnly[0].Single(t => t.Term == "dock").Weight, 6);
        Assert.DoesNotContain(terms[1], t => t.Term == "dock");   // 0.191666 inside group 1, 0.383333 outside
    }

    [Fact]
    public void TopTermsPerGroup_OneGroup_WeightIsTheCentroid()
    {
        (string[] texts, _) = TwoThemeInbox(perGroup: 10, seed: 2);
        var oneGroup = new int[texts.Length];

        var compared = GroupTerms.TopTermsPerGroup(texts, oneGroup, 1, Defaults);
        var centroid = GroupTerms.TopTermsPerGroup(texts, oneGroup, 1, Defaults with { CompareWithRestOfBatch = false });

        Assert.NotEmpty(compared[0]);
        Assert.Equal(centroid[0], compared[0]);
    }

    [Fact]
    public void TopTermsPerGroup_WordInOneDocumentOfLargeGroup_NotListedUnlessRuleOff()
    {
        (string[] texts, int[] assignments) = TwoThemeInbox(perGroup: 6, seed: 5);
        texts[0] += " zorblat";   // a one-off word: the highest idf in the batch

        var withRule = GroupTerms.TopTermsPerGroup(texts, assignments, 2, Defaults with { TermCount = 20 });
        var withoutRule = GroupTerms.TopTermsPerGroup(texts, assignments, 2, Defaults with { TermCount = 20, MinimumDocumentsPerTerm = 1 });

        Assert.DoesNotContain(withRule[0], t => t.Term == "zorblat");
        Assert.Contains(withoutRule[0], t => t.Term == "zorblat");
    }

    [Fact]
    public void TopTermsPerGroup_GroupOfOneDocument_ListsItsWords()
    {
        string[] texts = ["brake chain", "brake saddle", "refund invoice"];

        var terms = GroupTerms.TopTermsPerGroup(texts, [0, 0, 1], 2, Defaults);

        Assert.Equal(["refund", "invoice"], terms[1].Select(t => t.Term));
    }

    [Fact]
    public void TopTermsPerGroup_BigramsOn_PhraseListed()
    {
        (string[] texts, int[] assignments) = TwoThemeInbox(perGroup: 20, seed: 7);
        for (int i = 0; i < texts.Length; i++)
        {
            if ((i / 2) % 2 == 0)
            {
                texts[i] += assignments[i] == 0 ? " flat tyre" : " double charged";
            }
        }

        var withBigrams = GroupTerms.TopTermsPerGroup(texts, assignments, 2, Defaults with { IncludeBigrams = true, TermCount = 12 });
        var without = GroupTerms.TopTermsPerGroup(texts, assignments, 2, Defaults with { TermCount = 12 });

        Assert.Contains(withBigrams[0], t => t.Term == "flat tyre");
        Assert.Contains(withBigrams[1], t => t.Term == "double charged");
        Assert.DoesNotContain(without.SelectMany(list => list), t => t.Term.Contains(' '));
    }

    [Fact]
    public void TopTermsPerGroup_TermCount_CapsEveryList()
    {
        (string[] texts, int[] assignments) = TwoThemeInbox(perGroup: 20, seed: 9);

        var three = GroupTerms.TopTermsPerGroup(texts, assignments, 2, Defaults with { TermCount = 3 });
        var six = GroupTerms.TopTermsPerGroup(texts, assignments, 2, Defaults with { TermCount = 6 });
        var none = GroupTerms.TopTermsPerGroup(texts, assignments, 2, Defaults with { TermCount = 0 });

        Assert.All(three, list => Assert.Equal(3, list.Count));
        Assert.Equal(six[0].Take(3), three[0]);   // a shorter list is a prefix of a longer one
        Assert.All(none, Assert.Empty);
    }

    [Fact]
    public void TopTermsPerGroup_EmptyTexts_EmptyListsNoError()
    {
        var terms = GroupTerms.TopTermsPerGroup(["", "", ""], [0, 1, 1], 2, Defaults);

        Assert.Equal(2, terms.Length);
        Assert.All(terms, Assert.Empty);
    }

    [Fact]
    public void TopTermsPerGroup_GroupWithoutTokensOrMembers_EmptyListOthersFilled()
    {
        // Group 1's texts hold only stop words, digits, single letters and punctuation; group 2 has no texts.
        string[] texts = ["brake chain", "brake saddle", "the and of", "12345 !!! a b"];

        var terms = GroupTerms.TopTermsPerGroup(texts, [0, 0, 1, 1], 3, Defaults);

        Assert.NotEmpty(terms[0]);
        Assert.Empty(terms[1]);
        Assert.Empty(terms[2]);
    }

    [Fact]
    public void TopTermsPerGroup_NoTexts_OneEmptyListPerGroup()
    {
        Assert.Empty(GroupTerms.TopTermsPerGroup([], [], 0, Defaults));
        Assert.All(GroupTerms.TopTermsPerGroup([], [], 3, Defaults), Assert.Empty);
    }

    [Fact]
    public void TopTermsPerGroup_WordInEveryDocument_NeverListed()
    {
        string[] texts = ["bike brake", "bike chain", "bike refund", "bike invoice"];

        var terms = GroupTerms.TopTermsPerGroup(texts, [0, 0, 1, 1], 2, Defaults with { CompareWithRestOfBatch = false, MinimumDocumentsPerTerm = 1 });

        Assert.DoesNotContain(terms.SelectMany(list => list), t => t.Term == "bike");   // idf = ln(4/4) = 0
    }

    [Fact]
    public void TopTermsPerGroup_SameInputTwice_SameLists()
    {
        (string[] texts, int[] assignments) = TwoThemeInbox(perGroup: 25, seed: 4);

        var first = GroupTerms.TopTermsPerGroup(texts, assignments, 2, Defaults with { IncludeBigrams = true });
        var second = GroupTerms.TopTermsPerGroup(texts, assignments, 2, Defaults with { IncludeBigrams = true });

        Assert.Equal(first[0], second[0]);
        Assert.Equal(first[1], second[1]);
    }

    [Fact]
    public void TopTermsPerGroup_LengthMismatch_ThrowsNamingAssignments()
    {
        var exception = Assert.Throws<ArgumentException>(() => GroupTerms.TopTermsPerGroup(["brake", "chain"], [0], 1, Defaults));

        Assert.Equal("assignments", exception.ParamName);
        Assert.Contains("1 entries but texts has 2", exception.Message);
    }

    [Theory]
    [InlineData(-1)]
    [InlineData(2)]
    public void TopTermsPerGroup_AssignmentOutOfRange_ThrowsNamingAssignments(int badGroup)
    {
        var exception = Assert.Throws<ArgumentException>(() => GroupTerms.TopTermsPerGroup(["brake", "chain"], [0, badGroup], 2, Defaults));

        Assert.Equal("assignments", exception.ParamName);
        Assert.Contains($"assignments[1] is {badGroup}", exception.Message);
    }

    [Fact]
    public void TopTermsPerGroup_NegativeGroupCount_ThrowsNamingGroupCount()
    {
        var exception = Assert.ThrowsAny<ArgumentException>(() => GroupTerms.TopTermsPerGroup([], [], -1, Defaults));

        Assert.Equal("groupCount", exception.ParamName);
    }

    [Fact]
    public void TopTermsPerGroup_NullText_ThrowsNamingTexts()
    {
        var exception = Assert.Throws<ArgumentException>(() => GroupTerms.TopTermsPerGroup(["brake", null!], [0, 0], 1, Defaults));

        Assert.Equal("texts", exception.ParamName);
        Assert.Contains("texts[1]", exception.Message);
    }

    [Theory]
    [InlineData(-1, 2)]
    [InlineData(8, 0)]
    public void TopTermsPerGroup_OptionOutOfRange_ThrowsNamingOptions(int termCount, int minimumDocuments)
    {
        var options = new GroupTermsOptions { TermCount = termCount, MinimumDocumentsPerTerm = minimumDocuments };

        var exception = Assert.Throws<ArgumentException>(() => GroupTerms.TopTermsPerGroup(["brake"], [0], 1, options));

        Assert.Equal("options", exception.ParamName);
    }

    [Fact]
    public void TopTermsPerGroup_NullArguments_ThrowArgumentNull()
    {
        Assert.Equal("texts", Assert.Throws<ArgumentNullException>(() => GroupTerms.TopTermsPerGroup(null!, [], 0, Defaults)).ParamName);
        Assert.Equal("options", Assert.Throws<ArgumentNullException>(() => GroupTerms.TopTermsPerGroup([], [], 0, null!)).ParamName);
    }

    [Fact]
    public void TopTermsPerGroup_CancelledToken_Throws()
    {
        (string[] texts, int[] assignments) = TwoThemeInbox(perGroup: 10, seed: 1);
        using var source = new CancellationTokenSource();
        source.Cancel();

        Assert.ThrowsAny<OperationCanceledException>(() => GroupTerms.TopTermsPerGroup(texts, assignments, 2, Defaults, source.Token));
    }

    // Tickets alternate between the groups; each has two or three theme words and three or four filler words,
    // in a random order (fixed seed).
    internal static (string[] Texts, int[] Assignments) TwoThemeInbox(int perGroup, int seed)
    {
        var random = new Random(seed);
        var texts = new string[perGroup * 2];
        var assignments = new int[perGroup * 2];
        for (int i = 0; i < texts.Length; i++)
        {
            int group = i % 2;
            string[] theme = group == 0 ? BikeWords : BillingWords;
            var words = new List<string>();
            // Theme words cycle so each occurs in a good share of its group's tickets.
            words.Add(theme[(i / 2) % theme.Length]);
            words.Add(theme[(i / 2 + 1) % theme.Length]);
            if (random.Next(2) == 0)
            {
                words.Add(theme[random.Next(theme.Length)]);
            }

            foreach (string filler in Filler.OrderBy(_ => random.Next()).Take(3 + random.Next(2)))
            {
                words.Add(random.Next(2) == 0 ? filler : char.ToUpperInvariant(filler[0]) + filler[1..]);
            }

            texts[i] = string.Join(' ', words.OrderBy(_ => random.Next())) + (random.Next(2) == 0 ? "!" : ".");
            assignments[i] = group;
        }

        return (texts, assignments);
    }

    private static bool IsDescending(IReadOnlyList<WeightedTerm> list)
    {
        for (int i = 1; i < list.Count; i++)
        {
            if (list[i].Weight > list[i - 1].Weight)
            {
                return false;
            }
        }

        return true;
    }
}
