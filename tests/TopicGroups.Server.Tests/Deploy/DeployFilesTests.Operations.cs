using Xunit;
using YamlDotNet.RepresentationModel;

namespace TopicGroups.Server.Tests.Deploy;

/// <summary>The deploy files against the server's health services and shutdown settings (docs/operations.md).</summary>
public sealed partial class DeployFilesTests
{
    [Fact]
    public void Deployment_Probes_LivenessSkipsTheStoreReadinessChecksEverything()
    {
        YamlMappingNode container = ServerContainer();

        // "liveness" is the server's health service for the grouping pipeline alone; "" (no service) covers the store too.
        Assert.Equal("liveness", Text(container, "livenessProbe", "grpc", "service"));
        Assert.False(Has(At(container, "readinessProbe", "grpc"), "service"), "readiness must ask for the whole server");
    }

    [Fact]
    public void Deployment_ShutdownSettings_GraceInsideShutdownTimeoutInsideTerminationGrace()
    {
        var env = ((YamlSequenceNode)At(ServerContainer(), "env")).Children;
        string Env(string name) => Text(Assert.Single(env, variable => Text(variable, "name") == name), "value");
        int grace = int.Parse(Env("TopicGroups__Shutdown__GracePeriodSeconds"));
        TimeSpan shutdownTimeout = TimeSpan.Parse(Env("HostOptions__ShutdownTimeout"), System.Globalization.CultureInfo.InvariantCulture);
        int termination = int.Parse(Text(Single("Deployment"), "spec", "template", "spec", "terminationGracePeriodSeconds"));

        // The server refuses to start unless the grace period is below ShutdownTimeout; Kubernetes kills at termination.
        Assert.True(TimeSpan.FromSeconds(grace) + TimeSpan.FromSeconds(5) <= shutdownTimeout, $"grace {grace} s, shutdown timeout {shutdownTimeout}");
        Assert.True(shutdownTimeout < TimeSpan.FromSeconds(termination), $"shutdown timeout {shutdownTimeout}, termination grace {termination} s");
    }
}
