using Microsoft.Extensions.Diagnostics.HealthChecks;
using TopicGroups.Server.Storage;

namespace TopicGroups.Server.Services;

/// <summary>
/// Healthy when the saved-grouping store answers a tiny query within <see cref="Timeout"/>: the PostgreSQL server is
/// reachable and its schema ready, or the SQLite file can be opened (created) and read. A replica that cannot save or
/// read groupings should take no traffic, so readiness includes this check; liveness does not (restarting the
/// server would not bring the database back).
/// </summary>
internal sealed class StoreHealthCheck(IGroupingStore store) : IHealthCheck
{
    public const string Name = "store";

    /// <summary>Below the Kubernetes probes' 5 s timeout, so a hanging database reads as "not serving", not as "no answer".</summary>
    public static readonly TimeSpan Timeout = TimeSpan.FromSeconds(3);

    public async Task<HealthCheckResult> CheckHealthAsync(HealthCheckContext context, CancellationToken cancellationToken = default)
    {
        using var bounded = CancellationTokenSource.CreateLinkedTokenSource(cancellationToken);
        bounded.CancelAfter(Timeout);
        try
        {
            await store.CheckReachableAsync(bounded.Token);
            return HealthCheckResult.Healthy("The saved-grouping store answered.");
        }
        catch (OperationCanceledException) when (!cancellationToken.IsCancellationRequested)
        {
            return HealthCheckResult.Unhealthy($"The saved-grouping store did not answer within {Timeout.TotalSeconds:0} s.");
        }
        catch (Exception exception) when (exception is not OperationCanceledException)
        {
            // The message names the kind of failure only: connection strings (with passwords) stay out of health output.
            return HealthCheckResult.Unhealthy($"The saved-grouping store is unreachable ({exception.GetType().Name}).");
        }
    }
}
