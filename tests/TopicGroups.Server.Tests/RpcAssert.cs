using Google.Rpc;
using Grpc.Core;
using Xunit;

namespace TopicGroups.Server.Tests;

/// <summary>Reads the google.rpc details a failed call carries.</summary>
public static class RpcAssert
{
    public static async Task<RpcException> FailsAsync(StatusCode expected, Func<Task> call)
    {
        RpcException exception = await Assert.ThrowsAsync<RpcException>(call);
        Assert.True(expected == exception.StatusCode, $"Expected {expected} but got {exception.StatusCode}: {exception.Status.Detail}");
        return exception;
    }

    public static IReadOnlyList<BadRequest.Types.FieldViolation> Violations(RpcException exception)
    {
        BadRequest? badRequest = exception.GetRpcStatus()?.GetDetail<BadRequest>();
        Assert.NotNull(badRequest);
        return badRequest.FieldViolations;
    }

    /// <summary>The single violation on <paramref name="field"/>; fails if there is none or more than one.</summary>
    public static BadRequest.Types.FieldViolation Single(RpcException exception, string field)
    {
        var violations = Violations(exception);
        var matching = violations.Where(v => v.Field == field).ToList();
        Assert.True(
            matching.Count == 1,
            $"Expected one violation on {field}; got: {string.Join(" | ", violations.Select(v => $"{v.Field}: {v.Description}"))}");
        return matching[0];
    }

    public static QuotaFailure.Types.Violation Quota(RpcException exception)
    {
        QuotaFailure? quotaFailure = exception.GetRpcStatus()?.GetDetail<QuotaFailure>();
        Assert.NotNull(quotaFailure);
        return Assert.Single(quotaFailure.Violations);
    }
}
