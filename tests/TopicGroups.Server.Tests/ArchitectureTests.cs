using TopicGroups.Core.Grouping;
using Xunit;

namespace TopicGroups.Server.Tests;

public sealed class ArchitectureTests
{
    [Fact]
    public void CoreAssembly_References_NoGrpcProtobufOrAspNetAssembly()
    {
        string[] referenced = typeof(GroupingPipeline).Assembly.GetReferencedAssemblies().Select(a => a.Name!).ToArray();

        Assert.Contains("System.Runtime", referenced); // the list is real, not empty
        Assert.DoesNotContain(referenced, name =>
            name.StartsWith("Grpc", StringComparison.Ordinal)
            || name.StartsWith("Google.Protobuf", StringComparison.Ordinal)
            || name.StartsWith("Microsoft.AspNetCore", StringComparison.Ordinal));
    }
}
