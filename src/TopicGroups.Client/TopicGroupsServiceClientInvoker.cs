using Grpc.Core;

namespace TopicGroups.Protos.V1;

// Extends the generated client (a partial class) so TopicGroupsClient can build its health client on the
// same invoker, whichever way the generated client was made (a channel, or the gRPC client factory).
public static partial class TopicGroupsService
{
    public partial class TopicGroupsServiceClient
    {
        internal CallInvoker SharedCallInvoker => CallInvoker;
    }
}
