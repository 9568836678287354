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
    /// Further attempts after a call fails with UNAVAILABLE, or with RESOURCE_EXHAUSTED when the server said when
    /// to come back (a google.rpc.RetryInfo: it was busy). No other status is retried. Grouping calls carry a
    /// request id, so a retry never groups or saves twice; a streamed batch is sent again from its first chunk.
    /// 0 turns retries off.
    /// </summary>
    /// <value>The default is 3 retries.</value>
    public int MaxRetryAttempts { get; set; } = 3;

    /// <summary>
    /// Wait before the first retry after UNAVAILABLE; each later wait doubles (at most 30 seconds), and each is
    /// drawn at random between half and all of that ("equal jitter"). After RESOURCE_EXHAUSTED the client waits
    /// the server's RetryInfo delay instead.
    /// </summary>
    /// <value>The default is 250 milliseconds.</value>
    public TimeSpan RetryDelay { get; set; } = TimeSpan.FromMilliseconds(250);

    /// <summary>
    /// Total time for retrying one call, counted from its first attempt: no retry starts whose wait would end
    /// later. The call's deadline (<see cref="Timeout"/>) still bounds the whole call.
    /// </summary>
    /// <value>The default is 2 minutes.</value>
    public TimeSpan RetryBudget { get; set; } = TimeSpan.FromMinutes(2);

    /// <summary>
    /// Give every grouping call a fresh request id (a UUID) unless the caller passes one, so that its retries are
    /// recognised by the server: a retried grouping then runs and saves once (docs/retries.md). Turn it off only for
    /// servers older than request ids.
    /// </summary>
    /// <value>The default is true.</value>
    public bool AutomaticRequestIds { get; set; } = true;

    /// <summary>
    /// Batches whose encoded size is above this go through the streaming call in chunks; smaller ones go in
    /// one message (unless progress is asked for, which always streams).
    /// </summary>
    /// <value>The default is 1 MiB.</value>
    public int StreamingThresholdBytes { get; set; } = 1024 * 1024;

    /// <summary>
    /// Target encoded size of one streamed chunk. Keep it under about 80 KiB: the server's protobuf parser copies a
    /// chunk's packed embeddings into a new byte array, and one of 85,000 bytes or more goes on the large object heap,
    /// whose fresh memory and full collections cost time (at 100,000 × 384, 512 KiB chunks took 0.2–0.3 s longer end
    /// to end than 64 KiB ones, with 3 × the page faults; docs/performance.md). Much smaller chunks add per-message work.
    /// </summary>
    /// <value>The default is 64 KiB. A single document larger than this travels alone in its chunk.</value>
    public int ChunkSizeBytes { get; set; } = 64 * 1024;

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

    /// <summary>
    /// Send embeddings packed: each message carries its documents' embeddings as one block of float32 bytes
    /// (packed_embeddings) instead of a repeated float per document, which both ends encode and decode much faster.
    /// Batches whose documents lack embeddings or differ in length always go per document, so the server can name
    /// the odd one. Turn it off only for a server that predates packed_embeddings.
    /// </summary>
    /// <value>The default is true.</value>
    public bool PackEmbeddings { get; set; } = true;

    /// <summary>
    /// Ask for the placements packed (GroupingOptions.packed_placements): the reply carries one column per placement
    /// field instead of a message per document, which the server builds and both ends encode and decode faster. The
    /// client turns the columns back into GroupDocumentsResponse.Documents, with the ids of the documents it sent,
    /// so the reply looks the same either way; a server that predates packed placements answers per document, which
    /// works too.
    /// </summary>
    /// <value>The default is true.</value>
    public bool PackPlacements { get; set; } = true;

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

        if (RetryBudget < TimeSpan.Zero)
        {
            throw new ArgumentOutOfRangeException(nameof(RetryBudget), RetryBudget, "RetryBudget must be 0 (no retries) or more.");
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
            RetryBudget = RetryBudget,
            AutomaticRequestIds = AutomaticRequestIds,
            StreamingThresholdBytes = StreamingThresholdBytes,
            ChunkSizeBytes = ChunkSizeBytes,
            MaxResponseBytes = MaxResponseBytes,
            ApiKey = ApiKey,
            PackEmbeddings = PackEmbeddings,
            PackPlacements = PackPlacements,
        };
    }
}
