using TopicGroups.Client;

namespace TopicGroups.Cli.Commands;

/// <summary>
/// The API key for a remote server (--server) comes from the environment, not the command line, where other users
/// of the machine could read it in the process list and shells keep it in their history. Never printed.
/// </summary>
internal static class ApiKeyVariable
{
    public const string Name = "TOPICGROUPS_API_KEY";

    /// <summary>Client options carrying the key for a remote server; none for the in-process one, which has no keys.</summary>
    public static TopicGroupsClientOptions ClientOptions(bool remote)
    {
        string? key = remote ? Environment.GetEnvironmentVariable(Name) : null;
        return new TopicGroupsClientOptions { ApiKey = string.IsNullOrWhiteSpace(key) ? null : key.Trim() };
    }
}
