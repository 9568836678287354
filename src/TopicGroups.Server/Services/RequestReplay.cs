using System.Data.Common;
using Grpc.Core;
using Microsoft.Extensions.Options;
using TopicGroups.Server.Security;
using TopicGroups.Server.Storage;
using TopicGroups.Server.Validation;
using Proto = TopicGroups.Protos.V1;

namespace TopicGroups.Server.Services;

/// <summary>Settings of the request-id replay cache, configuration section "TopicGroups:RequestReplay".</summary>
internal sealed class RequestReplayOptions
{
    public const string SectionName = "TopicGroups:RequestReplay";

    /// <summary>How long a finished call's reply is kept for retries with the same request id.</summary>
    /// <value>The default is 600 seconds.</value>
    public int RetentionSeconds { get; set; } = 600;

    /// <summary>Most finished replies kept; the oldest goes first.</summary>
    /// <value>The default is 1,000.</value>
    public int MaxEntries { get; set; } = 1_000;

    /// <summary>Most bytes of finished replies kept (their encoded size); a reply larger than this is not kept.</summary>
    /// <value>The default is 256 MiB.</value>
    public long MaxStoredBytes { get; set; } = 256L * 1024 * 1024;

    /// <summary>Throws at start-up when a setting is out of range, naming the key.</summary>
    public void Validate()
    {
        if (RetentionSeconds < 0)
        {
            throw new InvalidOperationException(
                $"Configuration {SectionName}:{nameof(RetentionSeconds)} is {RetentionSeconds}; use 0 (keep no finished replies) or more.");
        }

        if (MaxEntries < 0)
        {
            throw new InvalidOperationException(
                $"Configuration {SectionName}:{nameof(MaxEntries)} is {MaxEntries}; use 0 (keep no finished replies) or more.");
        }

        if (MaxStoredBytes < 0)
        {
            throw new InvalidOperationException(
                $"Configuration {SectionName}:{nameof(MaxStoredBytes)} is {MaxStoredBytes}; use 0 (keep no finished replies) or more.");
        }
    }
}

/// <summary>A grouping call's request id, scoped to the caller's tenant, with the fingerprint of what it sent.</summary>
/// <param name="Field">The request field that carried the id, for errors.</param>
internal sealed record ReplayKey(string Tenant, string RequestId, string ContentHash, string Field)
{
    /// <summary>"{tenant}/{request id}": the id's alphabet has no '/', so the key is unambiguous.</summary>
    public string Key { get; } = Tenant + "/" + RequestId;
}

/// <summary>What a call running under a request id needs to know: the saved-request record to save with, if any.</summary>
internal sealed class ReplayRun
{
    public static readonly ReplayRun None = new(null);

    public ReplayRun(SavedRequest? request) => Request = request;

    /// <summary>Recorded beside a grouping this call saves, so that a retry after a restart finds it.</summary>
    public SavedRequest? Request { get; }

    public GroupingPlan Apply(GroupingPlan plan) => Request is null ? plan : plan with { Request = Request };
}

/// <summary>
/// Makes a retried grouping call safe: calls with the same request id (within one tenant) and the same content run
/// once. A retry while the first is running waits for its reply; a retry after it finished gets the kept reply
/// (bounded by count, bytes and time; see <see cref="RequestReplayOptions"/>). Failed calls are not kept, so their
/// retries run afresh; a retry whose first attempt was cancelled or timed out by its caller runs in its place.
/// Saved groupings record the request id, so after a restart a retry is grouped again but not saved again.
/// </summary>
internal sealed class RequestReplay
{
    public const int MaxRequestIdLength = 128;

    private readonly RequestReplayOptions _options;
    private readonly IGroupingStore _store;
    private readonly TimeProvider _time;
    private readonly ILogger<RequestReplay> _logger;
    private readonly object _gate = new();
    private readonly Dictionary<string, Entry> _entries = new(StringComparer.Ordinal);

    // Finished entries, oldest first: every entry is kept for the same time, so this is also expiry order.
    private readonly LinkedList<string> _finished = new();
    private long _storedBytes;

    public RequestReplay(IOptions<RequestReplayOptions> options, IGroupingStore store, TimeProvider time, ILogger<RequestReplay> logger)
    {
        _options = options.Value;
        _store = store;
        _time = time;
        _logger = logger;
    }

    /// <summary>Finished replies kept now (for tests and metrics).</summary>
    public int KeptReplies
    {
        get
        {
            lock (_gate)
            {
                return _finished.Count;
            }
        }
    }

    /// <summary>Null when <paramref name="requestId"/> is empty; INVALID_ARGUMENT naming <paramref name="field"/> when it is malformed.</summary>
    public static ReplayKey? KeyOf(string requestId, string field, RequestFingerprint fingerprint, ServerCallContext context)
    {
        if (requestId.Length == 0)
        {
            return null;
        }

        CheckRequestId(requestId, field);
        return new ReplayKey(CallerTenant.Of(context), requestId, fingerprint.Finish(), field);
    }

    /// <summary>The key of a unary call, or null when it has no request id.</summary>
    public static ReplayKey? KeyOf(Proto.GroupDocumentsRequest request, ServerCallContext context)
    {
        string requestId = request.RequestId;
        if (requestId.Length == 0)
        {
            return null;
        }

        CheckRequestId(requestId, "request_id");
        var fingerprint = new RequestFingerprint(nameof(Proto.TopicGroupsService.TopicGroupsServiceBase.GroupDocuments));
        request.RequestId = string.Empty;   // the content without the id
        fingerprint.Add(request);
        request.RequestId = requestId;
        return KeyOf(requestId, "request_id", fingerprint, context);
    }

    /// <summary>INVALID_ARGUMENT naming <paramref name="field"/> unless the id is 1-128 characters of A-Z, a-z, 0-9, '-', '_', '.'.</summary>
    public static void CheckRequestId(string requestId, string field)
    {
        if (requestId.Length > MaxRequestIdLength)
        {
            throw StatusErrors.InvalidArgument(
                field, $"has {requestId.Length} characters; use at most {MaxRequestIdLength} (a UUID has 36).");
        }

        for (int i = 0; i < requestId.Length; i++)
        {
            char c = requestId[i];
            if (!(char.IsAsciiLetterOrDigit(c) || c is '-' or '_' or '.'))
            {
                throw StatusErrors.InvalidArgument(
                    field,
                    $"has '{(char.IsControl(c) ? '?' : c)}' at position {i}; use only the letters A-Z and a-z, digits, '-', '_' and '.' (a UUID fits).");
            }
        }
    }

    /// <summary>
    /// Runs <paramref name="work"/> once per request id. <paramref name="options"/> are the call's options: when a
    /// grouping was already saved under this request id (before a restart), their save settings are cleared before
    /// the work runs, and the reply names the grouping saved then.
    /// </summary>
    public async Task<Proto.GroupDocumentsResponse> RunOnceAsync(
        ReplayKey? key,
        Proto.GroupingOptions? options,
        ServerCallContext context,
        Func<ReplayRun, Task<Proto.GroupDocumentsResponse>> work)
    {
        if (key is null)
        {
            return await work(ReplayRun.None);
        }

        CancellationToken cancellationToken = context.CancellationToken;
        while (true)
        {
            Entry entry;
            bool owner = false;
            lock (_gate)
            {
                RemoveExpired();
                if (_entries.TryGetValue(key.Key, out Entry? existing))
                {
                    entry = existing;
                }
                else
                {
                    entry = new Entry(key.ContentHash);
                    _entries.Add(key.Key, entry);
                    owner = true;
                }
            }

            if (entry.ContentHash != key.ContentHash)
            {
                throw Mismatch(key);
            }

            if (!owner)
            {
                try
                {
                    return await entry.Completion.Task.WaitAsync(cancellationToken);
                }
                catch (Exception exception) when (StoppedByItsCaller(exception) && !cancellationToken.IsCancellationRequested)
                {
                    continue;   // the first attempt's caller went away before it finished: this call runs it instead
                }
            }

            try
            {
                string? savedEarlier = SavesResult(options) ? await FindSavedAsync(key, cancellationToken) : null;
                if (savedEarlier is not null)
                {
                    options!.Save = false;
                    options.SaveAs = string.Empty;
                    options.ReplaceSaved = false;
                }

                Proto.GroupDocumentsResponse response = await work(
                    new ReplayRun(savedEarlier is null && SavesResult(options) ? new SavedRequest(key.RequestId, key.ContentHash) : null));
                if (savedEarlier is not null)
                {
                    response.SavedGroupingName = GroupingNames.NameOf(savedEarlier);
                }

                Keep(key.Key, entry, response);
                entry.Completion.SetResult(response);
                return response;
            }
            catch (Exception exception)
            {
                lock (_gate)
                {
                    if (_entries.TryGetValue(key.Key, out Entry? current) && ReferenceEquals(current, entry))
                    {
                        _entries.Remove(key.Key);
                    }
                }

                entry.Completion.TrySetException(exception);
                _ = entry.Completion.Task.Exception;   // observed: waiters, if any, rethrow it themselves
                throw;
            }
        }
    }

    private static bool SavesResult(Proto.GroupingOptions? options) => options is not null && (options.Save || options.SaveAs.Length > 0);

    private static bool StoppedByItsCaller(Exception exception) =>
        exception is OperationCanceledException
        || exception is RpcException { StatusCode: StatusCode.Cancelled or StatusCode.DeadlineExceeded };

    private async Task<string?> FindSavedAsync(ReplayKey key, CancellationToken cancellationToken)
    {
        SavedRequestRecord? record;
        try
        {
            record = await _store.FindByRequestAsync(key.Tenant, key.RequestId, cancellationToken);
        }
        catch (Exception exception) when (exception is DbException or IOException or UnauthorizedAccessException or InvalidDataException or InvalidOperationException or TimeoutException)
        {
            _logger.LogError(exception, "The grouping store failed while looking up a request id");
            throw new RpcException(new Status(
                StatusCode.Unavailable,
                $"The grouping store failed: {exception.Message} Check the server's TopicGroups:Storage configuration and the database, then retry."));
        }

        if (record is null)
        {
            return null;
        }

        if (record.ContentHash != key.ContentHash)
        {
            throw Mismatch(key);
        }

        return record.GroupingId;
    }

    private void Keep(string key, Entry entry, Proto.GroupDocumentsResponse response)
    {
        long bytes = response.CalculateSize();
        lock (_gate)
        {
            if (_options.RetentionSeconds == 0 || _options.MaxEntries == 0 || bytes > _options.MaxStoredBytes)
            {
                _entries.Remove(key);   // waiting retries still get the reply through the completion
                return;
            }

            entry.ExpiresAt = _time.GetUtcNow().AddSeconds(_options.RetentionSeconds);
            entry.Bytes = bytes;
            _finished.AddLast(key);
            _storedBytes += bytes;
            while (_finished.Count > _options.MaxEntries || _storedBytes > _options.MaxStoredBytes)
            {
                RemoveOldest();
            }
        }
    }

    private void RemoveExpired()
    {
        DateTimeOffset now = _time.GetUtcNow();
        while (_finished.First is { } oldest && _entries[oldest.Value].ExpiresAt <= now)
        {
            RemoveOldest();
        }
    }

    private void RemoveOldest()
    {
        string key = _finished.First!.Value;
        _finished.RemoveFirst();
        _storedBytes -= _entries[key].Bytes;
        _entries.Remove(key);
    }

    private static RpcException Mismatch(ReplayKey key) => StatusErrors.InvalidArgument(
        key.Field,
        "was already used for a call with different documents, options or method; a retry must send exactly the same "
        + "request, and a new request needs a new request id.");

    private sealed class Entry(string contentHash)
    {
        public string ContentHash { get; } = contentHash;

        public TaskCompletionSource<Proto.GroupDocumentsResponse> Completion { get; } =
            new(TaskCreationOptions.RunContinuationsAsynchronously);

        public DateTimeOffset ExpiresAt { get; set; } = DateTimeOffset.MaxValue;

        public long Bytes { get; set; }
    }
}
