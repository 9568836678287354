namespace TopicGroups.Server.Validation;

/// <summary>Named defaults of <see cref="TopicGroupsLimits"/>, quoted in the docs.</summary>
internal static class TopicGroupsLimitsDefaults
{
    public const int MaxDocuments = 500_000;
    public const int MaxDimensions = 8_192;

    // 64 Mi float32 values = 256 MiB: the one copy of a batch's embeddings (40,000 x 768 is 30.7 Mi values).
    public const long MaxEmbeddingValues = 64L * 1024 * 1024;
    public const int MaxTextLength = 100_000;
    public const int MaxGroupCount = 1_000;
    public const int MaxRestartCount = 64;
    public const int MaxIterations = 1_000;
    public const int MaxTermCount = 100;
    public const int MaxExampleCount = 100;

    // Silhouette cost is O(n d + sample × groups × d); 50,000 × 1,000 × 768 is already ~4e10 multiply-adds.
    public const int MaxSilhouetteSampleSize = 50_000;

    // One gRPC message (a whole unary batch, or one stream chunk). Larger batches stream in chunks.
    public const int MaxMessageBytes = 16 * 1024 * 1024;

    /// <summary>Fixed by the contract (Document.id is 1-256 characters), not configurable.</summary>
    public const int MaxIdLength = 256;
}

/// <summary>Size limits of one request, from configuration section "TopicGroups:Limits".</summary>
internal sealed class TopicGroupsLimits
{
    public const string SectionName = "TopicGroups:Limits";

    /// <value>The default is 500,000 documents per batch.</value>
    public int MaxDocuments { get; set; } = TopicGroupsLimitsDefaults.MaxDocuments;

    /// <value>The default is 8,192 values per embedding.</value>
    public int MaxDimensions { get; set; } = TopicGroupsLimitsDefaults.MaxDimensions;

    /// <summary>Documents × dimensions over the whole batch; each value takes 4 bytes on the server.</summary>
    /// <value>The default is 67,108,864 values (256 MiB).</value>
    public long MaxEmbeddingValues { get; set; } = TopicGroupsLimitsDefaults.MaxEmbeddingValues;

    /// <value>The default is 100,000 characters per document text.</value>
    public int MaxTextLength { get; set; } = TopicGroupsLimitsDefaults.MaxTextLength;

    /// <value>The default is 1,000 groups.</value>
    public int MaxGroupCount { get; set; } = TopicGroupsLimitsDefaults.MaxGroupCount;

    /// <value>The default is 64 restarts.</value>
    public int MaxRestartCount { get; set; } = TopicGroupsLimitsDefaults.MaxRestartCount;

    /// <value>The default is 1,000 iterations per restart.</value>
    public int MaxIterations { get; set; } = TopicGroupsLimitsDefaults.MaxIterations;

    /// <value>The default is 100 terms per group.</value>
    public int MaxTermCount { get; set; } = TopicGroupsLimitsDefaults.MaxTermCount;

    /// <value>The default is 100 examples per group.</value>
    public int MaxExampleCount { get; set; } = TopicGroupsLimitsDefaults.MaxExampleCount;

    /// <value>The default is 50,000 documents in the silhouette sample.</value>
    public int MaxSilhouetteSampleSize { get; set; } = TopicGroupsLimitsDefaults.MaxSilhouetteSampleSize;

    /// <summary>Largest single gRPC message the server reads (gRPC's MaxReceiveMessageSize).</summary>
    /// <value>The default is 16 MiB.</value>
    public int MaxMessageBytes { get; set; } = TopicGroupsLimitsDefaults.MaxMessageBytes;

    /// <summary>Throws at start-up when a configured limit is not positive, naming the key.</summary>
    public void Validate()
    {
        Check(MaxDocuments, nameof(MaxDocuments));
        Check(MaxDimensions, nameof(MaxDimensions));
        Check(MaxEmbeddingValues, nameof(MaxEmbeddingValues));
        Check(MaxTextLength, nameof(MaxTextLength));
        Check(MaxGroupCount, nameof(MaxGroupCount));
        Check(MaxRestartCount, nameof(MaxRestartCount));
        Check(MaxIterations, nameof(MaxIterations));
        Check(MaxTermCount, nameof(MaxTermCount));
        Check(MaxExampleCount, nameof(MaxExampleCount));
        Check(MaxSilhouetteSampleSize, nameof(MaxSilhouetteSampleSize));
        Check(MaxMessageBytes, nameof(MaxMessageBytes));
        if (MaxEmbeddingValues > Array.MaxLength)
        {
            throw new InvalidOperationException(
                $"Configuration {SectionName}:{nameof(MaxEmbeddingValues)} is {MaxEmbeddingValues}; one batch is held in one "
                + $"float[] array, so it can be at most {Array.MaxLength}.");
        }
    }

    private static void Check(long value, string name)
    {
        if (value < 1)
        {
            throw new InvalidOperationException(
                $"Configuration {SectionName}:{name} is {value}; it must be at least 1 (remove it to use the default).");
        }
    }
}
