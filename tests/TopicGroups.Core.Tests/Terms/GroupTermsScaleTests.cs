using System.Diagnostics;
using System.Text;
using TopicGroups.Core.Terms;
using Xunit.Abstractions;

namespace TopicGroups.Core.Tests.Terms;

// Long-running: excluded from CI by --filter "Category!=Slow". Timings depend on the machine's load; the
// bound only catches a blow-up (a quadratic step, a degenerate hash), not a few per cent.
[Trait("Category", "Slow")]
public sealed class GroupTermsScaleTests(ITestOutputHelper output)
{
    [Theory]
    [InlineData(false, 10)]
    [InlineData(true, 20)]
    public void TopTermsPerGroup_HundredThousandTickets_FinishesInSecondsAndFindsEachTheme(bool bigrams, int secondsAllowed)
    {
        const int n = 100_000, groups = 20, topicWords = 50;
        (string[] texts, int[] assignments, string[][] topics) = SyntheticBatch(n, groups, topicWords, seed: 42);

        var stopwatch = Stopwatch.StartNew();
        IReadOnlyList<WeightedTerm>[] terms = GroupTerms.TopTermsPerGroup(texts, assignments, groups, new GroupTermsOptions { IncludeBigrams = bigrams });
        stopwatch.Stop();

        output.WriteLine($"{n} texts of 40 words, {groups} groups, bigrams {bigrams}: {stopwatch.ElapsedMilliseconds} ms on {Environment.ProcessorCount} cores");
        Assert.True(stopwatch.Elapsed < TimeSpan.FromSeconds(secondsAllowed), $"took {stopwatch.Elapsed}");
        for (int g = 0; g < groups; g++)
        {
            var own = new HashSet<string>(topics[g]);
            Assert.Equal(GroupTermsDefaults.TermCount, terms[g].Count);
            Assert.All(terms[g], t => Assert.True(t.Term.Split(' ').All(own.Contains), $"group {g}: '{t.Term}' is not one of its topic words"));
        }
    }

    // Each text: 40 words, about 30% stop words and shared filler, 25% its group's own topic words, the rest
    // from a 30,000-word background vocabulary skewed towards its start. Words are random letter strings.
    private static (string[] Texts, int[] Assignments, string[][] Topics) SyntheticBatch(int n, int groups, int topicWords, int seed)
    {
        var random = new Random(seed);
        string[] background = Enumerable.Range(0, 30_000).Select(_ => RandomWord(random)).ToArray();
        string[][] topics = Enumerable.Range(0, groups).Select(_ => Enumerable.Range(0, topicWords).Select(_ => RandomWord(random)).ToArray()).ToArray();
        string[] shared = ["the", "and", "please", "Thanks", "hello", "issue", "of", "to"];
        var texts = new string[n];
        var assignments = new int[n];
        var text = new StringBuilder();
        for (int i = 0; i < n; i++)
        {
            int group = random.Next(groups);
            assignments[i] = group;
            text.Clear();
            for (int w = 0; w < 40; w++)
            {
                double u = random.NextDouble();
                text.Append(u < 0.3 ? shared[random.Next(shared.Length)]
                    : u < 0.55 ? topics[group][random.Next(topicWords)]
                    : background[(int)(Math.Pow(random.NextDouble(), 3) * background.Length)]);
                text.Append(w % 9 == 8 ? ". " : " ");
            }

            texts[i] = text.ToString();
        }

        return (texts, assignments, topics);
    }

    private static string RandomWord(Random random)
    {
        Span<char> letters = stackalloc char[random.Next(3, 10)];
        for (int i = 0; i < letters.Length; i++)
        {
            letters[i] = (char)('a' + random.Next(26));
        }

        return new string(letters);
    }
}
