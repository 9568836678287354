using System.CommandLine;
using Grpc.Core;
using TopicGroups.Cli.Input;
using TopicGroups.Cli.Output;

namespace TopicGroups.Cli.Commands;

/// <summary>
/// Where the saved-grouping commands find the service: --server URL, or an in-process server whose groupings
/// live in --store PATH (default: the per-user store). Runs a command body on a session and turns failures into
/// messages and exit codes.
/// </summary>
internal sealed class ServiceTarget
{
    public static string StoreDescription =>
        $"SQLite file of saved groupings for the in-process server. Default: {ServiceSession.DefaultStorePath} ($XDG_DATA_HOME/topicgroups/groupings.db). Ignored with --server.";

    public Option<string?> ServerAddress { get; } = new("--server")
    {
        Description = "Address of a running TopicGroups server (http://host:port or https://host:port); a server that requires an API key reads it from $TOPICGROUPS_API_KEY. Default: run the service inside this process.",
    };

    public Option<string?> Store { get; } = new("--store") { Description = StoreDescription };

    public void AddTo(Command command)
    {
        command.Add(ServerAddress);
        command.Add(Store);
        ServerAddress.Validators.Add(result =>
        {
            string? text = result.GetValueOrDefault<string?>();
            if (text is not null && ParseServer(text) is null)
            {
                result.AddError($"--server '{text}' is not an absolute http:// or https:// address, e.g. http://localhost:{TopicGroups.Server.ServerHost.DefaultPort}");
            }
        });
    }

    public Uri? Server(ParseResult parseResult) =>
        parseResult.GetValue(ServerAddress) is string text ? ParseServer(text) : null;

    /// <summary>"groupings/NAME" for NAME; a full resource name is kept as it is (the server checks the rest).</summary>
    public static string ResourceName(string name) =>
        name.StartsWith("groupings/", StringComparison.Ordinal) ? name : "groupings/" + name;

    /// <summary>Opens a session, runs <paramref name="body"/>, and reports what went wrong on <paramref name="error"/>.</summary>
    public static async Task<int> RunAsync(
        Uri? server, string? storePath, TextWriter error, Func<ServiceSession, Task<int>> body, CancellationToken cancellationToken)
    {
        try
        {
            await using ServiceSession session = await ServiceSession.OpenAsync(server, storePath, cancellationToken);
            return await body(session);
        }
        catch (InputException ex)
        {
            error.WriteLine(ex.Message);
            return ExitCodes.BadInput;
        }
        catch (RpcException ex) when (ex.StatusCode == StatusCode.Cancelled && cancellationToken.IsCancellationRequested)
        {
            error.WriteLine("cancelled");
            return ExitCodes.Cancelled;
        }
        catch (RpcException ex)
        {
            foreach (string line in RpcErrorText.Lines(ex, server))
            {
                error.WriteLine(line);
            }

            if (ex.StatusCode == StatusCode.NotFound)
            {
                error.WriteLine($"  'topicgroups groupings list{(server is null ? storePath is null ? string.Empty : $" --store {storePath}" : $" --server {server}")}' shows the saved groupings.");
            }

            return RpcErrorText.IsBadInput(ex.StatusCode) ? ExitCodes.BadInput : ExitCodes.Failure;
        }
        catch (OperationCanceledException) when (cancellationToken.IsCancellationRequested)
        {
            error.WriteLine("cancelled");
            return ExitCodes.Cancelled;
        }
        catch (HttpRequestException ex)
        {
            error.WriteLine($"cannot reach the server at {server}: {ex.Message}");
            return ExitCodes.Failure;
        }
        catch (Exception ex) when (ex is IOException or UnauthorizedAccessException)
        {
            error.WriteLine($"cannot write: {ex.Message}");
            return ExitCodes.Failure;
        }
    }

    private static Uri? ParseServer(string text) =>
        Uri.TryCreate(text, UriKind.Absolute, out Uri? uri) && (uri.Scheme == Uri.UriSchemeHttp || uri.Scheme == Uri.UriSchemeHttps)
            ? uri
            : null;
}
