namespace TopicGroups.Core.Terms;

public static class GroupTermsDefaults
{
    public const int TermCount = 8;

    public const int MinimumDocumentsPerTerm = 2;

    public const bool CompareWithRestOfBatch = true;
}

public sealed record GroupTermsOptions
{
    /// <summary>How many terms to list per group, highest weight first.</summary>
    /// <value>The default is 8 terms per group.</value>
    public int TermCount { get; init; } = GroupTermsDefaults.TermCount;

    /// <summary>Also weigh adjacent word pairs (after stop-word removal) as terms.</summary>
    /// <value>The default is false.</value>
    public bool IncludeBigrams { get; init; }

    /// <summary>
    /// In a group with more documents than this, a term must occur in at least this many of them to be
    /// listed, so one document's typo or name cannot label a whole group. Groups no larger than this value
    /// list any term. Set to 1 to turn the rule off.
    /// </summary>
    /// <value>The default is 2 documents.</value>
    public int MinimumDocumentsPerTerm { get; init; } = GroupTermsDefaults.MinimumDocumentsPerTerm;

    /// <summary>
    /// Weigh a term by how much more it marks this group than the rest of the batch (the group's mean
    /// TF-IDF weight minus the mean over all other documents), so words common to every group drop out.
    /// When false, the weight is the group's mean TF-IDF weight alone.
    /// </summary>
    /// <value>The default is true.</value>
    public bool CompareWithRestOfBatch { get; init; } = GroupTermsDefaults.CompareWithRestOfBatch;
}
