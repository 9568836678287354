using Google.Rpc;
using Grpc.Core;

namespace TopicGroups.Cli.Output;

/// <summary>Turns a failed call into lines a person can act on: the status, then each field violation.</summary>
internal static class RpcErrorText
{
    public static IReadOnlyList<string> Lines(RpcException exception, Uri? server)
    {
        var lines = new List<string>();
        string where = server is null ? "in-process server" : $"server {server}";
        lines.Add($"{where}: {exception.StatusCode}: {exception.Status.Detail}");

        BadRequest? badRequest = null;
        try
        {
            badRequest = exception.GetRpcStatus()?.GetDetail<BadRequest>();
        }
        catch (Google.Protobuf.InvalidProtocolBufferException)
        {
            // A status trailer that is not a google.rpc.Status: the status line above is all there is.
        }

        if (badRequest is not null)
        {
            foreach (BadRequest.Types.FieldViolation violation in badRequest.FieldViolations)
            {
                lines.Add($"  {violation.Field}: {violation.Description}");
            }
        }

        if (exception.StatusCode == StatusCode.Unauthenticated)
        {
            lines.Add($"  set the environment variable {Commands.ApiKeyVariable.Name} to the API key the server's operator gave you.");
        }

        if (exception.StatusCode == StatusCode.Unavailable && server is not null)
        {
            lines.Add($"  is a TopicGroups server running at {server}? Start one, or leave out --server to run in-process.");
        }

        return lines;
    }

    /// <summary>
    /// Bad input (exit code 2) as opposed to a failure of the service or the network (exit code 1). An unknown
    /// grouping name (NOT_FOUND) or a name already taken (ALREADY_EXISTS) is the caller's to fix too.
    /// </summary>
    public static bool IsBadInput(StatusCode code) =>
        code is StatusCode.InvalidArgument or StatusCode.OutOfRange or StatusCode.ResourceExhausted or StatusCode.FailedPrecondition
            or StatusCode.NotFound or StatusCode.AlreadyExists;
}
