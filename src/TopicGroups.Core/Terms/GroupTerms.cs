namespace TopicGroups.Core.Terms;

/// <summary>Top TF-IDF terms per group, weighed against the whole batch.</summary>
/// <remarks>
/// <para>Terms: see <see cref="Tokeniser"/> (Unicode letter/digit runs, lower-cased, single characters and
/// pure digits dropped), minus ML.NET's English stop-word list with the few words it lacks
/// (<see cref="StopWords"/>); with
/// <see cref="GroupTermsOptions.IncludeBigrams"/>, adjacent kept words of a document joined by a space are
/// terms too.</para>
/// <para>Weights, after Manning, Raghavan &amp; Schütze, Introduction to Information Retrieval (2008),
/// ch. 6 (tf-idf, sublinear tf, cosine normalisation) and §17.7 (label a cluster by the heaviest terms of
/// its centroid; differential labelling compares a cluster with the other clusters). The comparison
/// chosen here, subtracting the centroid of the rest of the batch in the same tf-idf space, is this
/// project's; the book's examples of differential labelling use mutual information or χ². With N documents in
/// the batch, df(t) of them containing term t, tf(t, d) the count of t in document d, and a group g of
/// |g| documents:</para>
/// <code>
/// idf(t)      = ln(N / df(t))
/// w(t, d)     = (1 + ln tf(t, d)) · idf(t)             for tf(t, d) &gt; 0, else 0
/// ŵ(t, d)     = w(t, d) / ‖w(·, d)‖₂                    unit-length document vector (0 if all weights are 0)
/// c_g(t)      = (1 / |g|) · Σ_{d ∈ g} ŵ(t, d)            the group's centroid
/// c_¬g(t)     = (1 / (N − |g|)) · Σ_{d ∉ g} ŵ(t, d)      the centroid of the rest of the batch (0 if g is the batch)
/// weight(t,g) = c_g(t) − c_¬g(t)                        (or c_g(t) alone when CompareWithRestOfBatch is false)
/// </code>
/// <para>A term is listed for g only if weight(t, g) &gt; 1e-12 and, when |g| &gt; m = MinimumDocumentsPerTerm,
/// at least m documents of g contain it. Lists are ordered by weight, highest first; equal weights by term
/// id (words in order of first occurrence in the batch, then word pairs), so the same input gives the same lists.</para>
/// <para>Why this shape: a word in nearly every document has idf near 0; a word spread evenly over all
/// groups ("thanks", "hello", "issue") has about the same centroid weight inside the group as outside it,
/// so the difference removes it; a word concentrated in one group keeps most of its weight. Averaging
/// unit-length vectors stops long documents from dominating, and the support rule stops a rare word
/// in one document (whose idf is the highest possible) from labelling a whole group.</para>
/// <para>Cost: one pass over the texts builds the vocabulary and integer documents (chunks of texts on all
/// cores, <see cref="TermCorpus"/>); the rest is linear in the number of (document, term) pairs, plus the
/// terms each group touches, with groups spread over the cores. Results do not depend on the core count.</para>
/// </remarks>
public static class GroupTerms
{
    private const double MinimumListedWeight = 1e-12;   // below this a weight is rounding noise, not a signal

    /// <summary>
    /// For each group 0..groupCount-1, its TermCount highest-weighted terms, highest first.
    /// assignments[i] is the group of texts[i]. A group with no documents, or whose documents have no
    /// terms, gets an empty list.
    /// </summary>
    /// <exception cref="ArgumentNullException">texts or options is null.</exception>
    /// <exception cref="ArgumentException">A text is null, assignments and texts differ in length, an assignment is
    /// outside 0..groupCount-1, groupCount is negative, or an option is out of range. The parameter name says which.</exception>
    /// <exception cref="OperationCanceledException">cancellationToken was cancelled.</exception>
    public static IReadOnlyList<WeightedTerm>[] TopTermsPerGroup(
        IReadOnlyList<string> texts,
        ReadOnlySpan<int> assignments,
        int groupCount,
        GroupTermsOptions options,
        CancellationToken cancellationToken = default)
    {
        Validate(texts, assignments, groupCount, options);
        var result = new IReadOnlyList<WeightedTerm>[groupCount];
        Array.Fill(result, Array.Empty<WeightedTerm>());
        if (options.TermCount == 0 || texts.Count == 0)
        {
            return result;
        }

        TermCorpus corpus = TermCorpus.Build(texts, options.IncludeBigrams, cancellationToken);
        cancellationToken.ThrowIfCancellationRequested();
        float[] weights = TermWeights.DocumentWeights(corpus, TermFrequencyScaling.Sublinear, normalise: true);

        int n = corpus.DocumentCount;
        int vocabularySize = corpus.VocabularySize;
        var batchSum = new double[vocabularySize];   // Σ_d ŵ(t, d) over the whole batch
        for (int p = 0; p < weights.Length; p++)
        {
            batchSum[corpus.TermIds[p]] += weights[p];
        }

        // Documents by group (a counting sort), so each group is one contiguous run.
        var groupStarts = new int[groupCount + 1];
        foreach (int group in assignments)
        {
            groupStarts[group + 1]++;
        }

        for (int g = 0; g < groupCount; g++)
        {
            groupStarts[g + 1] += groupStarts[g];
        }

        var documentsByGroup = new int[n];
        var filled = groupStarts.AsSpan(0, groupCount).ToArray();
        for (int i = 0; i < n; i++)
        {
            documentsByGroup[filled[assignments[i]]++] = i;
        }

        // Groups are independent: spread them over the cores, each worker with its own scratch.
        var parallelOptions = new ParallelOptions { CancellationToken = cancellationToken, MaxDegreeOfParallelism = Environment.ProcessorCount };
        Parallel.For(
            0,
            groupCount,
            parallelOptions,
            () => new GroupScratch(vocabularySize),
            (g, _, scratch) =>
            {
                ReadOnlySpan<int> members = documentsByGroup.AsSpan(groupStarts[g], groupStarts[g + 1] - groupStarts[g]);
                result[g] = TopTermsOfGroup(corpus, weights, batchSum, members, options, scratch);
                return scratch;
            },
            _ => { });
        cancellationToken.ThrowIfCancellationRequested();

        return result;
    }

    // weight(t, g) for every term of the group's documents, then the TermCount best (see the class remarks).
    private static WeightedTerm[] TopTermsOfGroup(
        TermCorpus corpus, float[] weights, double[] batchSum, ReadOnlySpan<int> members, GroupTermsOptions options, GroupScratch scratch)
    {
        int groupSize = members.Length;
        if (groupSize == 0)
        {
            return [];
        }

        double[] groupSum = scratch.GroupSum;
        int[] groupDocumentFrequency = scratch.GroupDocumentFrequency;
        int[] touched = scratch.Touched;
        int touchedCount = 0;
        foreach (int d in members)
        {
            for (int p = corpus.DocumentStarts[d]; p < corpus.DocumentStarts[d + 1]; p++)
            {
                int t = corpus.TermIds[p];
                if (groupDocumentFrequency[t]++ == 0)
                {
                    touched[touchedCount++] = t;
                }

                groupSum[t] += weights[p];
            }
        }

        int requiredDocuments = groupSize > options.MinimumDocumentsPerTerm ? options.MinimumDocumentsPerTerm : 1;
        int restSize = corpus.DocumentCount - groupSize;
        PriorityQueue<int, RankKey> best = scratch.Best;
        best.Clear();
        for (int j = 0; j < touchedCount; j++)
        {
            int t = touched[j];
            if (groupDocumentFrequency[t] >= requiredDocuments)
            {
                double centroid = groupSum[t] / groupSize;
                double rest = options.CompareWithRestOfBatch && restSize > 0
                    ? Math.Max(0, batchSum[t] - groupSum[t]) / restSize
                    : 0;
                double weight = centroid - rest;
                if (weight > MinimumListedWeight)
                {
                    var key = new RankKey(weight, t);
                    if (best.Count < options.TermCount)
                    {
                        best.Enqueue(t, key);
                    }
                    else if (best.TryPeek(out _, out RankKey worst) && RankKey.WorstFirst.Compare(key, worst) > 0)
                    {
                        best.DequeueEnqueue(t, key);
                    }
                }
            }

            // Reset only what this group touched, so the scratch is clean for the next one.
            groupSum[t] = 0;
            groupDocumentFrequency[t] = 0;
        }

        // Dequeue gives the worst first, so fill from the back: highest weight first, ties by lower term id.
        var terms = new WeightedTerm[best.Count];
        for (int r = terms.Length - 1; r >= 0; r--)
        {
            best.TryDequeue(out int termId, out RankKey rank);
            terms[r] = new WeightedTerm(corpus.TermText(termId), rank.Weight);
        }

        return terms;
    }

    /// <summary>One worker's vocabulary-sized buffers, all zero between groups.</summary>
    private sealed class GroupScratch(int vocabularySize)
    {
        public double[] GroupSum { get; } = new double[vocabularySize];           // Σ_{d ∈ g} ŵ(t, d)
        public int[] GroupDocumentFrequency { get; } = new int[vocabularySize];   // documents of g containing t
        public int[] Touched { get; } = new int[vocabularySize];                  // terms seen in g, in first-seen order
        public PriorityQueue<int, RankKey> Best { get; } = new(RankKey.WorstFirst);   // the TermCount best so far; worst on top
    }

    /// <summary>A candidate's place: higher weight is better; at equal weight the lower term id (see TermCorpus) is better.</summary>
    private readonly record struct RankKey(double Weight, int TermId)
    {
        /// <summary>Orders worse before better, so a priority queue's top is the candidate to drop.</summary>
        public static readonly IComparer<RankKey> WorstFirst = Comparer<RankKey>.Create(static (a, b) =>
            a.Weight != b.Weight ? a.Weight.CompareTo(b.Weight) : b.TermId.CompareTo(a.TermId));
    }

    private static void Validate(IReadOnlyList<string> texts, ReadOnlySpan<int> assignments, int groupCount, GroupTermsOptions options)
    {
        ArgumentNullException.ThrowIfNull(texts);
        ArgumentNullException.ThrowIfNull(options);
        if (groupCount < 0)
        {
            throw new ArgumentOutOfRangeException(nameof(groupCount), groupCount, "groupCount must be zero or more.");
        }

        if (assignments.Length != texts.Count)
        {
            throw new ArgumentException(
                $"assignments has {assignments.Length} entries but texts has {texts.Count}; pass one group per text.",
                nameof(assignments));
        }

        for (int i = 0; i < assignments.Length; i++)
        {
            if ((uint)assignments[i] >= (uint)groupCount)
            {
                throw new ArgumentException(
                    $"assignments[{i}] is {assignments[i]}; groups are numbered 0 to {groupCount - 1} (groupCount is {groupCount}).",
                    nameof(assignments));
            }
        }

        for (int i = 0; i < texts.Count; i++)
        {
            if (texts[i] is null)
            {
                throw new ArgumentException($"texts[{i}] is null; pass an empty string for a document without text.", nameof(texts));
            }
        }

        if (options.TermCount < 0)
        {
            throw new ArgumentException($"TermCount is {options.TermCount}; it must be zero or more.", nameof(options));
        }

        if (options.MinimumDocumentsPerTerm < 1)
        {
            throw new ArgumentException(
                $"MinimumDocumentsPerTerm is {options.MinimumDocumentsPerTerm}; it must be 1 or more (1 turns the rule off).",
                nameof(options));
        }
    }
}
