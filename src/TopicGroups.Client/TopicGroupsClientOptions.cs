namespace TopicGroups.Client;

/// <summary>Settings of <see cref="TopicGroupsClient"/>. Every default has a name in the docs below.</summary>
public sealed class TopicGroupsClientOptions
{
    /// <summary>Address of the service, e.g. http://localhost:5231. Read by AddTopicGroupsClient only.</summary>
    /// <value>The default is null: AddTopicGroupsClient requires it.</value>
    public Uri? Address { get; set; }

    /// <summary>Time allowed for one grouping call, retries and re-sends included; it becomes the call's gRPC deadline.</summary>
    /// <value>The default is 10 minutes.</value>
    public TimeSpan Timeout { get; set; } = TimeSpan.FromMinutes(10);

    /// <summary>
    /// Further attempts after a call fails with UNAVAILABLE (and only then: grouping is stateless, so repeating it
    /// is safe; a streamed batch is sent again from its first chunk). 0 turns retries off.
    /// </summary>
    /// <value>The default is 3 retries.</value>
    public int MaxRetryAttempts { get; set; } = 3;

    /// <summary>Wait before the first retry; each later wait doubles, with random jitter.</summary>
    /// <value>The default is 250 milliseconds.</value>
    public TimeSpan RetryDelay { get; set; } = TimeSpan.FromMilliseconds(250);

    /// <summary>
    /// Batches whose encoded size is above this go through the streaming call in chunks; smaller ones go in
    /// one message (unless progress is asked for, which always streams).
    /// </summary>
    /// <value>The default is 1 MiB.</value>
    public int StreamingThresholdBytes { get; set; } = 1024 * 1024;

    /// <summary>Target encoded size of one streamed chunk. Keep it under 1 MB so both ends reuse pooled buffers.</summary>
    /// <value>The default is 512 KiB. A single document larger than this travels alone in its chunk.</value>
    public int ChunkSizeBytes { get; set; } = 512 * 1024;

    /// <summary>
    /// Largest reply the channel accepts. A reply lists every document, so large batches need more than gRPC's
    /// default of 4 MB. AddTopicGroupsClient applies it; for your own GrpcChannel set
    /// GrpcChannelOptions.MaxReceiveMessageSize to it.
    /// </summary>
    /// <value>The default is 256 MiB.</value>
    public int MaxResponseBytes { get; set; } = 256 * 1024 * 1024;

    /// <summary>
    /// The API key for a server that requires one; sent as the metadata header "authorization: Bearer KEY" on every
    /// call. The key decides the tenant whose saved groupings the calls see. Use TLS (an https address) when the key
    /// crosses a network. The client never logs or prints it.
    /// </summary>
    /// <value>The default is null: no key is sent.</value>
    public string? ApiKey { get; set; }

    internal TopicGroupsClientOptions Validated()
    {
        if (ApiKey is not null && ApiKeyHeader.Problem(ApiKey) is string problem)
        {
            throw new ArgumentException(problem, nameof(ApiKey));   // the message names the fault, never the key
        }

        if (Timeout <= TimeSpan.Zero)
        {
            throw new ArgumentOutOfRangeException(nameof(Timeout), Timeout, "Timeout must be positive.");
        }

        if (MaxRetryAttempts < 0)
        {
            throw new ArgumentOutOfRangeException(nameof(MaxRetryAttempts), MaxRetryAttempts, "MaxRetryAttempts must be 0 (no retries) or more.");
        }

        if (RetryDelay < TimeSpan.Zero || RetryDelay > TimeSpan.FromMinutes(1))
        {
            throw new ArgumentOutOfRangeException(nameof(RetryDelay), RetryDelay, "RetryDelay must be between 0 and 1 minute.");
        }

        if (StreamingThresholdBytes < 0)
        {
            throw new ArgumentOutOfRangeException(nameof(StreamingThresholdBytes), StreamingThresholdBytes, "StreamingThresholdBytes must be 0 (always stream) or more.");
        }

        if (ChunkSizeBytes < 1024 || ChunkSizeBytes > 16 * 1024 * 1024)
        {
            throw new ArgumentOutOfRangeException(nameof(ChunkSizeBytes), ChunkSizeBytes, "ChunkSizeBytes must be between 1 KiB and 16 MiB (under 1 MB is best).");
        }

        if (MaxResponseBytes < 1)
        {
            throw new ArgumentOutOfRangeException(nameof(MaxResponseBytes), MaxResponseBytes, "MaxResponseBytes must be positive.");
        }

        return new TopicGroupsClientOptions
        {
            Address = Address,
            Timeout = Timeout,
            MaxRetryAttempts = MaxRetryAttempts,
            RetryDelay = RetryDelay,
            StreamingThresholdBytes = StreamingThresholdBytes,
            ChunkSizeBytes = ChunkSizeBytes,
            MaxResponseBytes = MaxResponseBytes,
            ApiKey = ApiKey,
        };
    }
}
