namespace TopicGroups.Core.Terms;

/// <summary>Top TF-IDF terms per group, weighed against the whole batch.</summary>
public static class GroupTerms
{
    /// <summary>
    /// For each group 0..groupCount-1, its TermCount highest-weighted terms, highest first.
    /// assignments[i] is the group of texts[i].
    /// </summary>
    public static IReadOnlyList<WeightedTerm>[] TopTermsPerGroup(
        IReadOnlyList<string> texts,
        ReadOnlySpan<int> assignments,
        int groupCount,
        GroupTermsOptions options,
        CancellationToken cancellationToken = default)
    {
        throw new NotImplementedException("REVIEW: being written (terms helper).");
    }
}
