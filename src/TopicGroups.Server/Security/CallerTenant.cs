using Grpc.Core;

namespace TopicGroups.Server.Security;

/// <summary>
/// The tenant a call acts for. The API-key check sets it once per call; with no keys configured every call
/// belongs to <see cref="Default"/>, so a single-team server behaves as before.
/// </summary>
internal static class CallerTenant
{
    public const string Default = "default";

    private const string UserStateKey = "topicgroups.tenant";

    public static string Of(ServerCallContext context) =>
        context.UserState.TryGetValue(UserStateKey, out object? tenant) && tenant is string name ? name : Default;

    public static void Set(ServerCallContext context, string tenant)
    {
        ArgumentException.ThrowIfNullOrWhiteSpace(tenant);
        context.UserState[UserStateKey] = tenant;
    }
}
