using Google.Protobuf.WellKnownTypes;
using Google.Rpc;
using Grpc.Core;

namespace TopicGroups.Server.Validation;

/// <summary>Builds errors in the google.rpc model: a canonical code plus a typed detail clients can read.</summary>
internal static class StatusErrors
{
    /// <summary>INVALID_ARGUMENT with a google.rpc.BadRequest listing every violation.</summary>
    public static RpcException InvalidArgument(IReadOnlyList<BadRequest.Types.FieldViolation> violations)
    {
        var badRequest = new BadRequest();
        badRequest.FieldViolations.AddRange(violations);
        BadRequest.Types.FieldViolation first = violations[0];
        string message = violations.Count == 1
            ? $"Invalid request: {first.Field} {first.Description}"
            : $"Invalid request ({violations.Count} problems; all are listed in the google.rpc.BadRequest detail). "
              + $"First: {first.Field} {first.Description}";
        return new Google.Rpc.Status
        {
            Code = (int)Code.InvalidArgument,
            Message = message,
            Details = { Any.Pack(badRequest) },
        }.ToRpcException();
    }

    public static RpcException InvalidArgument(string field, string description) =>
        InvalidArgument([new BadRequest.Types.FieldViolation { Field = field, Description = description }]);

    /// <summary>
    /// FAILED_PRECONDITION with a google.rpc.PreconditionFailure: the request is well formed, but this server's
    /// configuration or state refuses it. <paramref name="subject"/> names what must change (e.g. a configuration key).
    /// </summary>
    public static RpcException FailedPrecondition(string type, string subject, string description)
    {
        var preconditionFailure = new PreconditionFailure
        {
            Violations = { new PreconditionFailure.Types.Violation { Type = type, Subject = subject, Description = description } },
        };
        return new Google.Rpc.Status
        {
            Code = (int)Code.FailedPrecondition,
            Message = description,
            Details = { Any.Pack(preconditionFailure) },
        }.ToRpcException();
    }

    /// <summary>RESOURCE_EXHAUSTED with a google.rpc.QuotaFailure whose subject is the field over the limit.</summary>
    public static RpcException ResourceExhausted(string field, string description)
    {
        var quotaFailure = new QuotaFailure
        {
            Violations = { new QuotaFailure.Types.Violation { Subject = field, Description = description } },
        };
        return new Google.Rpc.Status
        {
            Code = (int)Code.ResourceExhausted,
            Message = $"Request too large: {field} {description}",
            Details = { Any.Pack(quotaFailure) },
        }.ToRpcException();
    }
}
