using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Commands;

/// <summary>
/// The one call the commands make to the service. The real one (<see cref="ServiceGrouping.RunAsync"/>)
/// talks gRPC to <paramref name="server"/>, or to a server hosted in this process when it is null;
/// tests pass a fake that answers from the documents it is given.
/// </summary>
internal delegate Task<GroupDocumentsResponse> GroupingCall(
    Uri? server,
    IReadOnlyList<Document> documents,
    GroupingOptions options,
    IProgress<GroupingProgress>? progress,
    CancellationToken cancellationToken);
