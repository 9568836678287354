using TopicGroups.Core.Grouping;

namespace TopicGroups.Server.Storage;

/// <summary>A grouping kept under a name: what was computed, how, and when.</summary>
/// <param name="Id">The {grouping} part of the resource name "groupings/{grouping}".</param>
/// <param name="Options">The options the grouping was made with, defaults filled in.</param>
public sealed record SavedGrouping(string Id, DateTimeOffset CreatedAt, GroupingSnapshot Snapshot, GroupingOptions Options)
{
    /// <summary>The request id that made it and its content hash; null when the call had none (docs/retries.md).</summary>
    public SavedRequest? Request { get; init; }
}

/// <summary>A grouping call's request id (unique per tenant) and the SHA-256 (hex) of what the call sent.</summary>
public sealed record SavedRequest(string RequestId, string ContentHash);

/// <summary>The grouping a request id saved, and that request's content hash.</summary>
public sealed record SavedRequestRecord(string GroupingId, string ContentHash);

/// <summary>Saving with a request id that already saved a grouping in the tenant (a retry raced its first attempt).</summary>
public sealed class RequestAlreadySavedException(string id)
    : Exception($"This request already saved the grouping \"{id}\".")
{
    public string Id { get; } = id;
}

/// <summary>One page of <see cref="IGroupingStore.ListAsync"/>: newest first; Next is null on the last page.</summary>
public sealed record GroupingPage(IReadOnlyList<SavedGroupingSummary> Groupings, GroupingPageToken? Next);

/// <summary>A listed grouping without its groups and centres.</summary>
public sealed record SavedGroupingSummary(
    string Id, DateTimeOffset CreatedAt, int GroupCount, int DocumentCount, int Dimensions, double Objective, GroupingOptions Options);

/// <summary>Where a page ends in the listing order (created time descending, then id ascending).</summary>
public readonly record struct GroupingPageToken(long CreatedAtMicroseconds, string Id);

/// <summary>Saving under a name that is taken, without asking to replace.</summary>
public sealed class GroupingExistsException(string id)
    : Exception($"A grouping named \"{id}\" is already saved.")
{
    public string Id { get; } = id;
}

// The storage types are public, unlike the rest of the server: the store contract tests and the crash-test writer
// (tests/TopicGroups.StoreWriter) use them directly, and InternalsVisibleTo would also expose the server's internal
// message types beside the client's public ones in the tests (CS0433).

/// <summary>
/// Saved groupings. Two implementations, run against one contract test suite: SQLite (embedded, the default)
/// and PostgreSQL (shared by several server replicas). Every save is one transaction: readers see the old
/// grouping or the new one, never a mix, also after a crash mid-save.
/// Every call acts within one tenant (the caller's, see Security/CallerTenant): ids are unique per tenant, and
/// another tenant's groupings are invisible, exactly as if they did not exist.
/// </summary>
public interface IGroupingStore
{
    /// <summary>Saves <paramref name="grouping"/>; with <paramref name="replace"/> an existing one of that id is replaced.</summary>
    /// <exception cref="GroupingExistsException">The id is taken in this tenant and <paramref name="replace"/> is false.</exception>
    /// <exception cref="RequestAlreadySavedException">The grouping's request id already saved a grouping in this tenant.</exception>
    Task SaveAsync(string tenant, SavedGrouping grouping, bool replace, CancellationToken cancellationToken);

    /// <summary>The grouping, or null when the tenant has none with that id.</summary>
    Task<SavedGrouping?> GetAsync(string tenant, string id, CancellationToken cancellationToken);

    Task<bool> ExistsAsync(string tenant, string id, CancellationToken cancellationToken);

    /// <summary>Up to <paramref name="pageSize"/> of the tenant's groupings after <paramref name="after"/> (null: from the newest).</summary>
    Task<GroupingPage> ListAsync(string tenant, int pageSize, GroupingPageToken? after, CancellationToken cancellationToken);

    /// <summary>True when a grouping was deleted, false when the tenant had none with that id.</summary>
    Task<bool> DeleteAsync(string tenant, string id, CancellationToken cancellationToken);

    /// <summary>The tenant's grouping saved with this request id (<see cref="SavedGrouping.Request"/>), or null.</summary>
    Task<SavedRequestRecord?> FindByRequestAsync(string tenant, string requestId, CancellationToken cancellationToken);

    /// <summary>
    /// Throws when the store cannot be used: its database unreachable, its file not creatable, its schema newer
    /// than this server. Cheap (one connection, one tiny query); the health check calls it on every probe.
    /// </summary>
    Task CheckReachableAsync(CancellationToken cancellationToken);
}
