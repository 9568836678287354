using Google.Rpc;
using Grpc.Core;
using Polly;
using Polly.Retry;

namespace TopicGroups.Client;

/// <summary>
/// The client's retry policy (a Polly retry strategy): only UNAVAILABLE (the server was not reached or went away)
/// and RESOURCE_EXHAUSTED carrying a google.rpc.RetryInfo (the server was busy and said when to come back) are
/// retried. UNAVAILABLE waits back off exponentially with jitter; RESOURCE_EXHAUSTED waits what the server asked.
/// No attempt starts once the wait would end past the retry budget, counted from the first attempt.
/// </summary>
internal sealed class CallRetries
{
    /// <summary>Longest back-off wait between two attempts after UNAVAILABLE, however many attempts came before.</summary>
    internal static readonly TimeSpan MaxBackoff = TimeSpan.FromSeconds(30);

    private static readonly ResiliencePropertyKey<long> StartedAt = new("topicgroups.retry.started-at");
    private static readonly ResiliencePropertyKey<TimeSpan> NextDelay = new("topicgroups.retry.next-delay");

    private readonly ResiliencePipeline _pipeline;
    private readonly TimeProvider _time;

    public CallRetries(TopicGroupsClientOptions options, TimeProvider time)
    {
        _time = time;
        if (options.MaxRetryAttempts == 0)
        {
            _pipeline = ResiliencePipeline.Empty;
            return;
        }

        TimeSpan budget = options.RetryBudget;
        TimeSpan firstDelay = options.RetryDelay;
        _pipeline = new ResiliencePipelineBuilder()
            .AddRetry(new RetryStrategyOptions
            {
                MaxRetryAttempts = options.MaxRetryAttempts,
                ShouldHandle = args =>
                {
                    if (args.Outcome.Exception is not RpcException exception || WaitBefore(exception, args.AttemptNumber, firstDelay) is not TimeSpan wait)
                    {
                        return ValueTask.FromResult(false);
                    }

                    // The budget: no attempt may start after it has run out.
                    TimeSpan elapsed = args.Context.Properties.TryGetValue(StartedAt, out long started) ? time.GetElapsedTime(started) : TimeSpan.Zero;
                    if (elapsed + wait > budget)
                    {
                        return ValueTask.FromResult(false);
                    }

                    args.Context.Properties.Set(NextDelay, wait);
                    return ValueTask.FromResult(true);
                },
                DelayGenerator = args => ValueTask.FromResult<TimeSpan?>(
                    args.Context.Properties.TryGetValue(NextDelay, out TimeSpan wait) ? wait : TimeSpan.Zero),
            })
            .Build();
    }

    /// <summary>
    /// The wait before the next attempt after <paramref name="exception"/>, or null when it must not be retried.
    /// UNAVAILABLE: d = min(firstDelay · 2^attempt, MaxBackoff), then a uniform draw from [d/2, d] ("equal jitter",
    /// so that many clients cut off together do not come back together). RESOURCE_EXHAUSTED: the server's
    /// RetryInfo delay exactly, and only when it sent one (a size limit has none: retrying would fail again).
    /// </summary>
    internal static TimeSpan? WaitBefore(RpcException exception, int attempt, TimeSpan firstDelay)
    {
        switch (exception.StatusCode)
        {
            case StatusCode.Unavailable:
                double ceiling = Math.Min(firstDelay.TotalMilliseconds * Math.Pow(2, Math.Min(attempt, 30)), MaxBackoff.TotalMilliseconds);
                return TimeSpan.FromMilliseconds(ceiling / 2 + Random.Shared.NextDouble() * ceiling / 2);
            case StatusCode.ResourceExhausted:
                RetryInfo? retryInfo = exception.GetRpcStatus()?.GetDetail<RetryInfo>();
                return retryInfo?.RetryDelay is { } delay ? delay.ToTimeSpan() : null;
            default:
                return null;
        }
    }

    public async ValueTask<T> ExecuteAsync<T>(Func<CancellationToken, ValueTask<T>> call, CancellationToken cancellationToken)
    {
        ResilienceContext context = ResilienceContextPool.Shared.Get(cancellationToken);
        try
        {
            context.Properties.Set(StartedAt, _time.GetTimestamp());
            return await _pipeline.ExecuteAsync(static (context, call) => call(context.CancellationToken), context, call);
        }
        finally
        {
            ResilienceContextPool.Shared.Return(context);
        }
    }

    public async ValueTask ExecuteAsync(Func<CancellationToken, ValueTask> call, CancellationToken cancellationToken) =>
        await ExecuteAsync(
            async token =>
            {
                await call(token);
                return true;
            },
            cancellationToken);
}
