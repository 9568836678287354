using Google.Protobuf.WellKnownTypes;
using Google.Rpc;
using Grpc.Core;
using Microsoft.Extensions.Options;
using TopicGroups.Core.Clustering;
using TopicGroups.Core.Grouping;

namespace TopicGroups.Server.Services;

/// <summary>Admission settings, read from configuration section "TopicGroups:Limits" beside the request limits.</summary>
internal sealed class GroupingAdmissionOptions
{
    public const string SectionName = "TopicGroups:Limits";

    /// <summary>Groupings computing at once; each uses every core for its parallel loops.</summary>
    /// <value>The default is 2.</value>
    public int MaxConcurrentGroupings { get; set; } = 2;

    /// <summary>How long a grouping waits for a free slot before RESOURCE_EXHAUSTED (never past the call's deadline).</summary>
    /// <value>The default is 2,000 ms.</value>
    public int AdmissionWaitMilliseconds { get; set; } = 2_000;

    /// <summary>Largest estimated working memory of one grouping (see <see cref="GroupingAdmission.EstimateBytes"/>).</summary>
    /// <value>The default is 4 GiB.</value>
    public long MaxGroupingMemoryBytes { get; set; } = 4L * 1024 * 1024 * 1024;

    /// <summary>
    /// Most bytes of finished batches' embedding arrays kept for the next batches (<see cref="Validation.BatchArrayPool"/>):
    /// a kept array spares a batch of similar size the first touch of fresh memory (about 0.45 s at 100,000 × 384 on
    /// a 2-core VM). Idle memory the process holds, never more than MaxConcurrentGroupings × MaxGroupingMemoryBytes
    /// (the memory the admission already allows; a larger setting is capped there); 0 keeps none.
    /// </summary>
    /// <value>The default is 512 MiB: the arrays of two batches of 100,000 × 384, or one of 300,000 × 384.</value>
    public long KeptBatchArrayBytes { get; set; } = 512L * 1024 * 1024;

    /// <summary><see cref="KeptBatchArrayBytes"/> within the memory the admission allows for running groupings.</summary>
    public long EffectiveKeptBatchArrayBytes =>
        Math.Min(KeptBatchArrayBytes, MaxConcurrentGroupings * Math.Min(MaxGroupingMemoryBytes, long.MaxValue / MaxConcurrentGroupings));

    /// <summary>Throws at start-up when a setting is out of range, naming the key.</summary>
    public void Validate()
    {
        if (MaxConcurrentGroupings < 1)
        {
            throw new InvalidOperationException(
                $"Configuration {SectionName}:{nameof(MaxConcurrentGroupings)} is {MaxConcurrentGroupings}; it must be at least 1.");
        }

        if (AdmissionWaitMilliseconds < 0)
        {
            throw new InvalidOperationException(
                $"Configuration {SectionName}:{nameof(AdmissionWaitMilliseconds)} is {AdmissionWaitMilliseconds}; use 0 (refuse at once when busy) or more.");
        }

        if (KeptBatchArrayBytes < 0)
        {
            throw new InvalidOperationException(
                $"Configuration {SectionName}:{nameof(KeptBatchArrayBytes)} is {KeptBatchArrayBytes}; use 0 (keep none) or more.");
        }

        if (MaxGroupingMemoryBytes < 1)
        {
            throw new InvalidOperationException(
                $"Configuration {SectionName}:{nameof(MaxGroupingMemoryBytes)} is {MaxGroupingMemoryBytes}; it must be at least 1.");
        }
    }
}

/// <summary>
/// Lets a bounded number of groupings compute at once. A grouping whose estimated memory is over the limit is
/// refused before it starts; one that finds every slot taken waits briefly, then gets RESOURCE_EXHAUSTED with a
/// google.rpc.RetryInfo saying when to try again.
/// </summary>
internal sealed class GroupingAdmission
{
    private readonly GroupingAdmissionOptions _options;
    private readonly SemaphoreSlim _slots;

    public GroupingAdmission(IOptions<GroupingAdmissionOptions> options)
    {
        _options = options.Value;
        _slots = new SemaphoreSlim(_options.MaxConcurrentGroupings, _options.MaxConcurrentGroupings);
    }

    /// <summary>Groupings computing now.</summary>
    public int Running => _options.MaxConcurrentGroupings - _slots.CurrentCount;

    /// <summary>
    /// Working memory of one grouping beyond its request message, in bytes: the one float32 copy of the embeddings
    /// (n·d), per restart the centroids and their running sums (2·k·d), per document an assignment, a similarity and
    /// a score block row (n·(8 + 4·k) capped at 64 blocks of 256 rows), the texts as strings and their term counts
    /// (about 6 bytes per character), and the silhouette sample's distances (s·k). An estimate, not a measurement:
    /// it errs on the high side for the big terms (n·d, texts).
    /// </summary>
    public static long EstimateBytes(GroupingInput input)
    {
        long n = input.Embeddings.Rows;
        long d = input.Embeddings.Dimensions;
        GroupingOptions options = input.Options;
        long k = options.GroupCount > 0
            ? options.GroupCount
            : options.MaximumGroupCount > 0 ? options.MaximumGroupCount : Math.Min(n, GroupCountSearchDefaults.DefaultMaximumCap);
        long restarts = Math.Max(1, options.RestartCount);
        long textCharacters = 0;
        foreach (string text in input.Texts)
        {
            textCharacters += text.Length;
        }

        long embeddings = 4 * n * d;
        long centroids = 4 * 2 * k * d * Math.Min(restarts, Environment.ProcessorCount);
        long perDocument = n * 8 + 4 * k * Math.Min(n, 64 * 256);
        long texts = 6 * textCharacters;
        long silhouette = 4 * Math.Min(n, Math.Max(0, options.SilhouetteSampleSize)) * k;
        return embeddings + centroids + perDocument + texts + silhouette;
    }

    /// <summary>
    /// Checks the memory estimate, then waits for a slot (up to the configured wait, never past the deadline).
    /// Dispose the returned lease when the computation has really stopped.
    /// </summary>
    /// <param name="stopWaiting">Ends the wait early with <see cref="OperationCanceledException"/> (the server is stopping).</param>
    public async Task<IDisposable> EnterAsync(GroupingInput input, ServerCallContext context, CancellationToken stopWaiting = default)
    {
        long estimate = EstimateBytes(input);
        if (estimate > _options.MaxGroupingMemoryBytes)
        {
            CallFacts.MarkRejection(context, ServerMetrics.Reasons.Memory);
            throw Exhausted(
                "grouping memory",
                $"This grouping needs about {Mebibytes(estimate)} of working memory ({input.Embeddings.Rows} documents × "
                + $"{input.Embeddings.Dimensions} dimensions); this server allows {Mebibytes(_options.MaxGroupingMemoryBytes)} per grouping "
                + $"({GroupingAdmissionOptions.SectionName}:{nameof(GroupingAdmissionOptions.MaxGroupingMemoryBytes)} = "
                + $"{_options.MaxGroupingMemoryBytes}). Split the batch, lower options.group_count, or raise the limit.",
                retryAfter: null);
        }

        TimeSpan wait = TimeSpan.FromMilliseconds(_options.AdmissionWaitMilliseconds);
        TimeSpan untilDeadline = context.Deadline - DateTime.UtcNow;
        if (untilDeadline < wait)
        {
            wait = untilDeadline < TimeSpan.Zero ? TimeSpan.Zero : untilDeadline;
        }

        using var waiting = CancellationTokenSource.CreateLinkedTokenSource(context.CancellationToken, stopWaiting);
        if (!await _slots.WaitAsync(wait, waiting.Token))
        {
            CallFacts.MarkRejection(context, ServerMetrics.Reasons.Admission);
            throw Exhausted(
                "concurrent groupings",
                $"All {_options.MaxConcurrentGroupings} grouping slots of this server are busy and none came free within "
                + $"{(int)wait.TotalMilliseconds} ms ({GroupingAdmissionOptions.SectionName}:{nameof(GroupingAdmissionOptions.MaxConcurrentGroupings)}). "
                + "Retry after the delay in the google.rpc.RetryInfo detail, or send to another replica.",
                retryAfter: TimeSpan.FromSeconds(1));
        }

        return new Lease(_slots);
    }

    private static string Mebibytes(long bytes) => $"{bytes / (1024.0 * 1024.0):0.#} MiB";

    private static RpcException Exhausted(string subject, string message, TimeSpan? retryAfter)
    {
        var status = new Google.Rpc.Status
        {
            Code = (int)Code.ResourceExhausted,
            Message = message,
            Details = { Any.Pack(new QuotaFailure { Violations = { new QuotaFailure.Types.Violation { Subject = subject, Description = message } } }) },
        };
        if (retryAfter is TimeSpan delay)
        {
            status.Details.Add(Any.Pack(new RetryInfo { RetryDelay = Duration.FromTimeSpan(delay) }));
        }

        return status.ToRpcException();
    }

    private sealed class Lease(SemaphoreSlim slots) : IDisposable
    {
        private int _released;

        public void Dispose()
        {
            if (Interlocked.Exchange(ref _released, 1) == 0)
            {
                slots.Release();
            }
        }
    }
}
