using Microsoft.ML;
using Microsoft.ML.Data;
using Microsoft.ML.Transforms.Text;
using TopicGroups.Core.Terms;

namespace TopicGroups.Core.Tests.Terms;

// Tolerances: ML.NET returns float32 weights, so comparisons with it allow 1e-5 relative; the textbook
// figures are printed to two decimals, so those comparisons allow half a unit in the last place.
public sealed class TermWeightsTests
{
    // Invented tickets for a fictional city bike-rental service; words chosen outside every stop-word list
    // and separated by single spaces, so ML.NET's whitespace tokeniser and ours see the same tokens.
    private static readonly string[] RentalTickets =
    [
        "Brake squeaks brake brake pads worn",
        "Refund refund charged twice card",
        "Saddle loose brake cable",
        "Charged deposit card refund pending pending pending",
        "Dock unlock failed dock station",
        "Courier helmet delivery late",
    ];

    [Fact]
    public void DocumentWeights_RawCounts_MatchMicrosoftMlTfIdf()
    {
        // External check against ML.NET (a general-purpose ML library), computed live: NormalizeText ->
        // TokenizeIntoWords -> MapValueToKey -> ProduceNgrams(ngramLength: 1, weighting: TfIdf), whose weight is
        // count × ln(N / df). Our raw-count mode must give the same weight for every (document, term).
        List<Dictionary<string, float>> reference = MicrosoftMlTfIdf(RentalTickets, removeStopWords: false);

        TermCorpus corpus = TermCorpus.Build(RentalTickets, includeBigrams: false);
        float[] weights = TermWeights.DocumentWeights(corpus, TermFrequencyScaling.Raw, normalise: false);

        for (int d = 0; d < RentalTickets.Length; d++)
        {
            Dictionary<string, float> ours = WeightsOf(corpus, weights, d);
            Assert.Equal(reference[d].Keys.Order(), ours.Keys.Order());
            foreach ((string term, float expected) in reference[d])
            {
                Assert.True(Math.Abs(expected - ours[term]) <= 1e-5 * Math.Max(1, Math.Abs(expected)),
                    $"document {d}, term '{term}': ML.NET {expected}, ours {ours[term]}");
            }
        }

        // A spot check by hand, so the comparison cannot pass on two equal mistakes: "brake" occurs 3 times in
        // document 0 and in 2 of the 6 documents, so its weight is 3 × ln(6 / 2) = 3.2958.
        Assert.Equal(3 * Math.Log(3), WeightsOf(corpus, weights, 0)["brake"], 4);
    }

    [Fact]
    public void DocumentWeights_TextsWithStopWords_SameTermsAndWeightsAsMicrosoftMlWithStopWordRemoval()
    {
        // External check against ML.NET, computed live: with its RemoveDefaultStopWords(English) in the pipeline,
        // the same terms survive in every document and get the same raw tf-idf weights.
        string[] texts =
        [
            "Please the brake is squeaking and the brake pads are worn",
            "I was charged twice for the rental please refund it",
            "The dock would not unlock so I could not return the bike",
            "Thanks the brake cable was fixed",
        ];
        List<Dictionary<string, float>> reference = MicrosoftMlTfIdf(texts, removeStopWords: true);

        TermCorpus corpus = TermCorpus.Build(texts, includeBigrams: false);
        float[] weights = TermWeights.DocumentWeights(corpus, TermFrequencyScaling.Raw, normalise: false);

        for (int d = 0; d < texts.Length; d++)
        {
            Dictionary<string, float> ours = WeightsOf(corpus, weights, d);
            // ML.NET keeps one-letter tokens ("i"); our tokeniser drops single characters by rule.
            Dictionary<string, float> expected = reference[d].Where(kv => kv.Key.Length > 1).ToDictionary();
            Assert.Equal(expected.Keys.Order(), ours.Keys.Order());
            foreach ((string term, float value) in expected)
            {
                Assert.Equal(value, ours[term], 4);
            }
        }
    }

    [Fact]
    public void InverseDocumentFrequencies_TextbookCollection_MatchesPublishedIdfValues()
    {
        // Manning, Raghavan & Schütze, Introduction to Information Retrieval (2008), §6.2.1, Figure 6.8: idf in
        // Reuters-RCV1 (N = 806,791) with log base 10. Values, section and figure numbers from memory:
        // car df 18,165 idf 1.65; auto 6,723 2.08; insurance 19,241 1.62; best 25,235 1.5.
        // Ours uses ln, so divide by ln 10.
        double[] idf = TermWeights.InverseDocumentFrequencies(806_791, [18_165, 6_723, 19_241, 25_235]);

        double[] base10 = idf.Select(value => value / Math.Log(10)).ToArray();
        double[] published = [1.65, 2.08, 1.62, 1.50];
        for (int t = 0; t < published.Length; t++)
        {
            Assert.InRange(base10[t], published[t] - 0.005, published[t] + 0.005);
        }
    }

    [Fact]
    public void DocumentWeights_SublinearNormalised_MatchesTextbookLtcQueryVector()
    {
        // Manning, Raghavan & Schütze (2008), §6.4.3, Example 6.4 (values and section number from memory):
        // N = 1,000,000 and df(auto) = 5,000, df(best) = 50,000, df(car) = 10,000, df(insurance) = 1,000; the query "best car
        // insurance" weighted ltc has normalised weights best 0.34, car 0.52, insurance 0.78. Every tf is 1,
        // so the log base cancels in the normalisation. The same df/N ratios at N = 1,000: best in 50
        // documents, car in 10, insurance in 1, auto in 5; the rest hold only "filler", whose weight is 0.
        var texts = new string[1000];
        texts[0] = "best car insurance filler";
        for (int i = 1; i < texts.Length; i++)
        {
            var words = new List<string> { "filler" };
            if (i < 50) words.Add("best");
            if (i < 10) words.Add("car");
            if (i >= 100 && i < 105) words.Add("auto");
            texts[i] = string.Join(' ', words);
        }

        TermCorpus corpus = TermCorpus.Build(texts, includeBigrams: false);
        float[] weights = TermWeights.DocumentWeights(corpus, TermFrequencyScaling.Sublinear, normalise: true);
        Dictionary<string, float> query = WeightsOf(corpus, weights, 0);

        Assert.Equal(0.34, query["best"], 0.005);
        Assert.Equal(0.52, query["car"], 0.005);
        Assert.Equal(0.78, query["insurance"], 0.005);
        Assert.Equal(0.0, query["filler"], 6);
    }

    [Fact]
    public void DocumentWeights_Sublinear_OnePlusNaturalLogOfCount()
    {
        // Common practice with no single source for the numbers: 1 + ln tf (§6.4.1 defines 1 + log tf).
        // "dock" occurs 4 times in document 0 and in 1 of the 2 documents: (1 + ln 4) × ln 2.
        TermCorpus corpus = TermCorpus.Build(["dock dock dock dock", "unlock"], includeBigrams: false);
        float[] weights = TermWeights.DocumentWeights(corpus, TermFrequencyScaling.Sublinear, normalise: false);

        Assert.Equal((1 + Math.Log(4)) * Math.Log(2), WeightsOf(corpus, weights, 0)["dock"], 5);
    }

    [Fact]
    public void DocumentWeights_Normalised_EveryDocumentUnitLengthOrZero()
    {
        TermCorpus corpus = TermCorpus.Build([.. RentalTickets, "", "brake"], includeBigrams: false);
        float[] weights = TermWeights.DocumentWeights(corpus, TermFrequencyScaling.Sublinear, normalise: true);

        for (int d = 0; d < corpus.DocumentCount; d++)
        {
            double norm = Math.Sqrt(WeightsOf(corpus, weights, d).Values.Sum(w => (double)w * w));
            Assert.True(d == RentalTickets.Length ? norm == 0 : Math.Abs(norm - 1) < 1e-6, $"document {d}: norm {norm}");
        }
    }

    private static Dictionary<string, float> WeightsOf(TermCorpus corpus, float[] weights, int document)
    {
        var result = new Dictionary<string, float>();
        for (int p = corpus.DocumentStarts[document]; p < corpus.DocumentStarts[document + 1]; p++)
        {
            result.Add(corpus.TermText(corpus.TermIds[p]), weights[p]);
        }

        return result;
    }

    // Per document: term -> ML.NET's TF-IDF weight, for every non-zero slot.
    private static List<Dictionary<string, float>> MicrosoftMlTfIdf(string[] texts, bool removeStopWords)
    {
        var ml = new MLContext(seed: 1);
        IDataView data = ml.Data.LoadFromEnumerable(texts.Select(t => new TextRow { Text = t }));
        var tokens = ml.Transforms.Text.NormalizeText("Normalized", "Text")
            .Append(ml.Transforms.Text.TokenizeIntoWords("Tokens", "Normalized"));
        var keyed = removeStopWords
            ? tokens.Append(ml.Transforms.Text.RemoveDefaultStopWords("Kept", "Tokens", StopWordsRemovingEstimator.Language.English))
                .Append(ml.Transforms.Conversion.MapValueToKey("Keys", "Kept"))
            : tokens.Append(ml.Transforms.Conversion.MapValueToKey("Keys", "Tokens"));
        var pipeline = keyed.Append(ml.Transforms.Text.ProduceNgrams(
            "Ngrams", "Keys", ngramLength: 1, useAllLengths: false, weighting: NgramExtractingEstimator.WeightingCriteria.TfIdf));
        IDataView transformed = pipeline.Fit(data).Transform(data);

        DataViewSchema.Column column = transformed.Schema["Ngrams"];
        VBuffer<ReadOnlyMemory<char>> slotNames = default;
        column.GetSlotNames(ref slotNames);
        string[] names = slotNames.DenseValues().Select(name => name.ToString()).ToArray();

        var result = new List<Dictionary<string, float>>();
        using DataViewRowCursor cursor = transformed.GetRowCursor([column]);
        ValueGetter<VBuffer<float>> getter = cursor.GetGetter<VBuffer<float>>(column);
        VBuffer<float> row = default;
        while (cursor.MoveNext())
        {
            getter(ref row);
            float[] dense = row.DenseValues().ToArray();
            result.Add(Enumerable.Range(0, dense.Length).Where(i => dense[i] != 0).ToDictionary(i => names[i], i => dense[i]));
        }

        return result;
    }

    private sealed class TextRow
    {
        public string Text { get; set; } = "";
    }
}
