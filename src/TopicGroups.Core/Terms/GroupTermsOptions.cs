namespace TopicGroups.Core.Terms;

public static class GroupTermsDefaults
{
    public const int TermCount = 8;
}

public sealed record GroupTermsOptions
{
    /// <value>The default is 8 terms per group.</value>
    public int TermCount { get; init; } = GroupTermsDefaults.TermCount;

    /// <summary>Also weigh adjacent word pairs (after stop-word removal) as terms.</summary>
    /// <value>The default is false.</value>
    public bool IncludeBigrams { get; init; }
}
