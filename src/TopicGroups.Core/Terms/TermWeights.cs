namespace TopicGroups.Core.Terms;

/// <summary>How a term's count in a document enters its weight.</summary>
internal enum TermFrequencyScaling
{
    /// <summary>tf(t, d), the raw count.</summary>
    Raw,

    /// <summary>1 + ln tf(t, d) for tf &gt; 0 (Manning, Raghavan &amp; Schütze, 2008, §6.4.1, "sublinear tf scaling").</summary>
    Sublinear,
}

/// <summary>
/// TF-IDF weights of every document of a <see cref="TermCorpus"/>, after Manning, Raghavan &amp; Schütze,
/// Introduction to Information Retrieval (2008), ch. 6:
/// <code>
/// idf(t)    = ln(N / df(t))                   N documents in the batch, df(t) of them contain t  (§6.2.1)
/// w(t, d)   = tf'(t, d) · idf(t)              tf' = raw count, or 1 + ln tf for sublinear scaling (§6.2.2, §6.4.1)
/// ŵ(t, d)   = w(t, d) / sqrt(Σ_u w(u, d)²)     when normalised: unit-length document vectors (§6.3.1);
///                                             a document whose weights are all zero stays all zero
/// </code>
/// With <see cref="TermFrequencyScaling.Sublinear"/> and normalisation this is the "ltc" scheme of the
/// SMART notation (§6.4.3, Figure 6.15).
/// </summary>
internal static class TermWeights
{
    /// <summary>idf(t) = ln(N / df(t)) for every term id; 0 for a term in every document.</summary>
    public static double[] InverseDocumentFrequencies(int documentCount, ReadOnlySpan<int> documentFrequencies)
    {
        var idf = new double[documentFrequencies.Length];
        for (int t = 0; t < idf.Length; t++)
        {
            idf[t] = Math.Log((double)documentCount / documentFrequencies[t]);
        }

        return idf;
    }

    /// <summary>
    /// One weight per posting of <paramref name="corpus"/> (parallel to <see cref="TermCorpus.TermIds"/>),
    /// by the formulas on this class.
    /// </summary>
    public static float[] DocumentWeights(TermCorpus corpus, TermFrequencyScaling scaling, bool normalise)
    {
        ArgumentNullException.ThrowIfNull(corpus);
        double[] idf = InverseDocumentFrequencies(corpus.DocumentCount, corpus.DocumentFrequencies());
        var weights = new float[corpus.TermIds.Length];
        for (int d = 0; d < corpus.DocumentCount; d++)
        {
            int start = corpus.DocumentStarts[d];
            int end = corpus.DocumentStarts[d + 1];
            double sumOfSquares = 0;
            for (int p = start; p < end; p++)
            {
                int count = corpus.TermCounts[p];
                double tf = scaling == TermFrequencyScaling.Sublinear ? 1 + Math.Log(count) : count;
                double weight = tf * idf[corpus.TermIds[p]];
                sumOfSquares += weight * weight;
                weights[p] = (float)weight;
            }

            if (normalise && sumOfSquares > 0)
            {
                double scale = 1 / Math.Sqrt(sumOfSquares);
                for (int p = start; p < end; p++)
                {
                    weights[p] = (float)(weights[p] * scale);
                }
            }
        }

        return weights;
    }
}
