using Xunit;

namespace TopicGroups.Server.Tests.Operations;

/// <summary>
/// Tests that time stages of heavy groupings or hold the machine's cores (deadline stages, shutdown): run alone,
/// after the parallel tests, so they neither disturb other tests' timing nor are disturbed by it.
/// </summary>
[CollectionDefinition(Name, DisableParallelization = true)]
public sealed class TimingSensitiveCollection
{
    public const string Name = "Timing-sensitive operations tests";
}
